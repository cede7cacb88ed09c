/**
 * The bench's feed server in a process of its own, so that the polling rounds' CPU time is
 * the poller's alone. Usage: feed-server-run <feeds> <items>; prints the port, serves until
 * stdin closes; "publish <i>" on stdin publishes an item in feed i, "counts" prints the counts.
 */
import { createInterface } from 'node:readline';
import { startFeedServer } from './feed-server.js';

const [feeds, items] = process.argv.slice(2).map(Number);
const server = await startFeedServer(feeds ?? 200, items ?? 10);
process.stdout.write(`${new URL(server.url('/')).port}\n`);
for await (const line of createInterface({ input: process.stdin })) {
  const [cmd, arg] = line.split(' ');
  if (cmd === 'publish') server.publish(Number(arg));
  if (cmd === 'counts') {
    process.stdout.write(`${JSON.stringify(server.counts())}\n`);
    server.resetCounts();
  }
}
await server.close();
