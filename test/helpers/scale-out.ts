/**
 * The scale-out runs shared by the scale-out tests: the articles through three worker
 * processes and one linker on Redis, and what one uninterrupted process makes of the same.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { expect } from 'vitest';
import { syntheticStream } from '../../src/bench/synthetic-stream.js';
import { parseConfig } from '../../src/config/load-config.js';
import { openQueue, startLinker } from '../../src/distribute/roles.js';
import { checkEvalInput } from '../../src/eval/eval-input.js';
import { scorePartitions } from '../../src/eval/partition-metrics.js';
import { toArticles } from '../../src/eval/prepare-mentions.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import type { ArticleOutcome } from '../../src/pipeline/index.js';
import type { Article } from '../../src/records.js';
import { openRedisStore } from '../../src/store/redis/redis-store.js';
import type { Store } from '../../src/store/store.js';
import { DEMO_DIR } from './demo.js';
import { runArticles, testConfig, testRuntime } from './runtime.js';
import { waitFor } from './wait-for.js';

const ROOT = fileURLToPath(new URL('../..', import.meta.url));

/** Which event each stored mention's best link names, keyed article#sentence. */
export async function partition(store: Store, articles: readonly Article[]): Promise<Map<string, string>> {
  const out = new Map<string, string>();
  for (const a of articles) {
    for (const s of (await store.getArticle(a.id))?.sentences ?? []) {
      const best = s.links.find((l) => l.rank === 0);
      if (best) out.set(`${a.id}#${s.index}`, best.eventId);
    }
  }
  return out;
}

export function clusters(p: Map<string, string>): string[][] {
  const by = new Map<string, string[]>();
  for (const [k, e] of p) by.set(e, [...(by.get(e) ?? []), k]);
  return [...by.values()];
}

function startWorkerProcess(configFile: string): ChildProcess {
  return spawn(process.execPath, ['--import', 'tsx', join(ROOT, 'src/cli/main.ts'), 'serve', '--role', 'worker', '--config', configFile], {
    cwd: ROOT,
    env: { ...process.env, STRANDLINE_LOG_LEVEL: 'warn' },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
}

/** What one uninterrupted process makes of a list of articles. */
export interface Reference {
  articles: Article[];
  partition: Map<string, string>;
  counts: Awaited<ReturnType<Store['counts']>>;
}
export async function referenceOf(articles: Article[]): Promise<Reference> {
  const rt = await testRuntime();
  await runArticles(rt, articles);
  const out = { articles, partition: await partition(rt.store, articles), counts: await rt.store.counts() };
  await rt.close();
  return out;
}

/** The demo and synthetic articles, 2,000 in all, in the order they are queued. */
export async function scaleOutArticles(): Promise<Article[]> {
  const demo = (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
  const synthetic = toArticles(checkEvalInput(syntheticStream(6000, 7)), 'synthetic', '2030-01-01T00:00:00.000Z').slice(
    0,
    2000 - demo.length,
  );
  return [...demo, ...synthetic];
}

/** Runs the articles through three worker processes and a linker on `url`; `midway` runs once `midwayAt` are linked. */
export async function distributedRun(
  url: string,
  articles: readonly Article[],
  midwayAt: number,
  leaseMs: number | undefined,
  midway: (ctx: {
    workers: ChildProcess[];
    queue: Awaited<ReturnType<typeof openQueue>>;
    partitionName: string;
    outcomes: ArticleOutcome[];
  }) => Promise<void>,
): Promise<{
  outcomes: ArticleOutcome[];
  counts: Awaited<ReturnType<Store['counts']>>;
  got: Map<string, string>;
  deadLetters: number;
  pendingLeft: number;
  stderr: string;
}> {
  const dir = mkdtempSync(join(tmpdir(), 'strandline-scale-'));
  const configFile = join(dir, 'config.json');
  const partitionName = `test-${randomUUID()}`;
  const raw = {
    store: { kind: 'redis', redis: { url, partition: partitionName } },
    queue: { claimIdleMs: 1500, blockMs: 200, batch: 8 },
    analysis: { threads: 0 },
    log: { level: 'warn' },
  };
  writeFileSync(configFile, JSON.stringify(raw));
  const config = parseConfig(raw);
  const queue = await openQueue(config, createLogger('silent'));
  const workers = [0, 1, 2].map(() => startWorkerProcess(configFile));
  const stderr: string[] = [];
  for (const w of workers) w.stderr!.on('data', (d: Buffer) => stderr.push(d.toString()));
  const linking = await startLinker(config, createLogger('silent'), { leaseMs });
  const outcomes: ArticleOutcome[] = [];
  linking.linker.outcome$.subscribe((o) => outcomes.push(o));
  const store = await openRedisStore({ url, partition: partitionName });
  try {
    await queue.enqueue(articles);
    await waitFor(`${midwayAt} linked articles`, () => outcomes.length >= midwayAt, 60_000);
    await midway({ workers, queue, partitionName, outcomes });
    const deadline = Date.now() + 120_000;
    while (outcomes.length < articles.length && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100));
    const [pendingLeft] = (await queue.redis.xpending(`{strandline:${partitionName}}:intake`, 'workers')) as [number];
    return {
      outcomes,
      counts: await store.counts(),
      got: await partition(store, articles),
      deadLetters: (await queue.depth()).deadLetters,
      pendingLeft,
      stderr: stderr.join(''),
    };
  } finally {
    for (const w of workers) w.kill('SIGTERM');
    await linking.stop();
    await store.dropPartition();
    await store.close();
    queue.close();
  }
}

export function expectSameAsOneProcess(r: Awaited<ReturnType<typeof distributedRun>>, ref: Reference): void {
  expect(r.outcomes.length, r.stderr).toBe(ref.articles.length);
  expect(r.outcomes.filter((o) => o.status === 'rejected')).toEqual([]);
  expect(r.counts).toEqual(ref.counts);
  expect(r.got.size).toBe(ref.partition.size);
  expect(scorePartitions(clusters(ref.partition), clusters(r.got)).b3.f1).toBe(1);
  expect(r.deadLetters).toBe(0);
  expect(r.pendingLeft).toBe(0);
}
