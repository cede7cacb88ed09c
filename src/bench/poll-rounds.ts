/**
 * Polling at scale: FEEDS feeds (ten items each) served by a local server in another
 * process, polled in rounds by one poller (default poll.concurrency). Round 1 fetches
 * every feed; before round 2 a few feeds publish one item, so round 2 should be answered
 * almost entirely by 304s. Reports requests, answers, bytes and the poller's CPU time per round.
 */
import { spawn } from 'node:child_process';
import { createInterface } from 'node:readline';
import { fileURLToPath } from 'node:url';
import { parseConfig } from '../config/load-config.js';
import { createLogger } from '../logger.js';
import { FeedPoller, type RoundSummary } from '../poll/feed-poller.js';
import { openSqliteStore } from '../store/sqlite/sqlite-store.js';
import type { ServedCounts } from './feed-server.js';

export interface PollRoundRow {
  round: number;
  feeds: number;
  requests: number;
  ok: number;
  notModified: number;
  newItems: number;
  bytes: number;
  cpuMs: number;
  seconds: number;
}

const FEEDS = 200;
const PUBLISHING = 5;

export async function pollRounds(): Promise<PollRoundRow[]> {
  const child = spawn(process.execPath, [fileURLToPath(new URL('./feed-server-run.js', import.meta.url)), String(FEEDS), '10'], {
    stdio: ['pipe', 'pipe', 'inherit'],
  });
  const lines = createInterface({ input: child.stdout! })[Symbol.asyncIterator]();
  const next = async (): Promise<string> => String((await lines.next()).value);
  const port = Number(await next());
  const config = parseConfig({ ingest: { allowPrivateNetworks: true } });
  const store = openSqliteStore(':memory:');
  let clock = new Date('2026-10-01T08:00:00.000Z');
  const poller = new FeedPoller({
    store,
    submit: async () => undefined,
    limits: config.ingest,
    options: config.poll,
    logger: createLogger('silent'),
    now: () => clock,
  });
  await poller.load(Array.from({ length: FEEDS }, (_, i) => ({ url: `http://127.0.0.1:${port}/feeds/${i}.xml` })));
  const rows: PollRoundRow[] = [];
  try {
    for (let round = 1; round <= 2; round++) {
      if (round === 2) for (let i = 0; i < PUBLISHING; i++) child.stdin!.write(`publish ${i * 37}\n`);
      const cpu = process.cpuUsage();
      const t0 = performance.now();
      const r: RoundSummary = await poller.pollDue();
      const seconds = (performance.now() - t0) / 1000;
      const used = process.cpuUsage(cpu);
      child.stdin!.write('counts\n');
      const served = JSON.parse(await next()) as ServedCounts;
      rows.push({
        round,
        feeds: r.polled,
        requests: served.requests,
        ok: served.ok,
        notModified: served.notModified,
        newItems: r.newItems,
        bytes: r.bytes,
        cpuMs: (used.user + used.system) / 1000,
        seconds,
      });
      clock = new Date(clock.getTime() + config.poll.intervalSeconds * 1000);
    }
  } finally {
    await poller.stop();
    child.stdin!.end();
    await store.close();
  }
  return rows;
}
