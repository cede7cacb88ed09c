/** Child process of the bench: the notification latency row (notify-latency.ts), printed as JSON. */
import { notifyLatency } from './notify-latency.js';

process.stdout.write(`${JSON.stringify(await notifyLatency(20, 15))}\n`);
