/**
 * Runs the transformer throughput measurement alone and prints its row as JSON. The bench
 * starts it as a child process: in the bench's own process the heap left by the workloads
 * before it slowed the pipeline side (63 % of the model's throughput there, 78-91 % alone).
 */
import { parseConfig } from '../config/load-config.js';
import { readReplayInput } from '../ingest/replay-source.js';
import { DEMO_FEEDS } from '../cli/common.js';
import { transformerThroughput } from './transformer-throughput.js';

const { articles } = await readReplayInput([DEMO_FEEDS], parseConfig({}).ingest);
process.stdout.write(JSON.stringify(await transformerThroughput(articles)));
