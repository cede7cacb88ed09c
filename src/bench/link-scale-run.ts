/**
 * Runs the link-scale measurement alone and prints its rows as JSON. The bench starts it
 * as a child process, so the measurement gets a fresh heap, untouched by the workloads
 * measured before it.
 */
import { parseConfig } from '../config/load-config.js';
import { linkScale } from './link-scale.js';

process.stdout.write(JSON.stringify(linkScale(parseConfig({}), [10_000, 100_000, 1_000_000])));
