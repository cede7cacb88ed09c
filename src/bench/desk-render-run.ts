/** Child process of the bench: the desk-in-a-browser row (desk-render.ts), printed as JSON. */
import { deskRender } from './desk-render.js';

process.stdout.write(`${JSON.stringify(await deskRender())}\n`);
