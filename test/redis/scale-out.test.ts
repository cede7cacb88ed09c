import { type ChildProcess, spawn } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { hostname, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';
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
import { DEMO_DIR } from '../helpers/demo.js';
import { redisTestsRun, startPrivateRedis } from '../helpers/redis.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';
import { waitFor } from '../helpers/wait-for.js';

const run = redisTestsRun();
const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const REDIS_URL = 'redis://127.0.0.1:6379';

/** Which event each stored mention's best link names, keyed article#sentence. */
async function partition(store: Store, articles: readonly Article[]): Promise<Map<string, string>> {
  const out = new Map<string, string>();
  for (const a of articles) {
    for (const s of (await store.getArticle(a.id))?.sentences ?? []) {
      const best = s.links.find((l) => l.rank === 0);
      if (best) out.set(`${a.id}#${s.index}`, best.eventId);
    }
  }
  return out;
}

function clusters(p: Map<string, string>): string[][] {
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

describe.skipIf(!run)('scale-out over Redis: three worker processes and one linker', () => {
  /** What one uninterrupted process makes of a list of articles. */
  interface Reference {
    articles: Article[];
    partition: Map<string, string>;
    counts: Awaited<ReturnType<Store['counts']>>;
  }
  let full: Reference;
  let short: Reference;

  async function referenceOf(articles: Article[]): Promise<Reference> {
    const rt = await testRuntime();
    await runArticles(rt, articles);
    const out = { articles, partition: await partition(rt.store, articles), counts: await rt.store.counts() };
    await rt.close();
    return out;
  }

  beforeAll(async () => {
    const demo = (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
    const synthetic = toArticles(checkEvalInput(syntheticStream(6000, 7)), 'synthetic', '2030-01-01T00:00:00.000Z').slice(
      0,
      2000 - demo.length,
    );
    full = await referenceOf([...demo, ...synthetic]);
    short = await referenceOf(full.articles.slice(0, 400));
  }, 120_000);

  /** Runs the articles through three worker processes and a linker on `url`; `midway` runs once `midwayAt` are linked. */
  async function distributedRun(
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

  function expectSameAsOneProcess(r: Awaited<ReturnType<typeof distributedRun>>, ref: Reference): void {
    expect(r.outcomes.length, r.stderr).toBe(ref.articles.length);
    expect(r.outcomes.filter((o) => o.status === 'rejected')).toEqual([]);
    expect(r.counts).toEqual(ref.counts);
    expect(r.got.size).toBe(ref.partition.size);
    expect(scorePartitions(clusters(ref.partition), clusters(r.got)).b3.f1).toBe(1);
    expect(r.deadLetters).toBe(0);
    expect(r.pendingLeft).toBe(0);
  }

  it('stores every article and mention exactly once and makes the events one process makes, with a worker killed mid-stream', async () => {
    expect(full.articles).toHaveLength(2000);
    let heldAtKill = 0;
    // The hunt starts early: workers do not wait for the linker, so once many articles are
    // linked the intake may be fully analysed and no worker holds anything any more.
    const r = await distributedRun(REDIS_URL, full.articles, 20, undefined, async ({ workers, queue, partitionName }) => {
      // Kill one worker while it holds entries: the others must take them over.
      const victim = `${hostname()}-${workers[1]!.pid}`;
      await waitFor(
        'the chosen worker to hold entries',
        async () => {
          const [, , , consumers] = (await queue.redis.xpending(`{strandline:${partitionName}}:intake`, 'workers')) as [
            number,
            string,
            string,
            [string, string][] | null,
          ];
          heldAtKill = Number(consumers?.find(([name]) => name === victim)?.[1] ?? 0);
          if (heldAtKill > 0) workers[1]!.kill('SIGKILL');
          return heldAtKill > 0;
        },
        60_000,
        5,
      );
    });
    expect(heldAtKill).toBeGreaterThan(0);
    expectSameAsOneProcess(r, full);
  }, 300_000);

  it('completes with nothing lost when Redis (persistence on) restarts mid-run', async () => {
    const redis = await startPrivateRedis();
    try {
      const r = await distributedRun(redis.url, full.articles, 300, undefined, async () => {
        await redis.restart();
      });
      expect(redis.restarts).toBe(1);
      expectSameAsOneProcess(r, full);
    } finally {
      await redis.stop();
    }
  }, 300_000);

  // Four times the linker's lease (15 s): the lease lapses during the outage and the linker
  // must take it back by itself.
  it('links every article afterwards, with no manual step, when Redis is down for 60 s mid-run', async () => {
    const redis = await startPrivateRedis();
    try {
      let linkedBefore = 0;
      const r = await distributedRun(redis.url, short.articles, 60, undefined, async ({ outcomes }) => {
        linkedBefore = outcomes.length;
        await redis.restart(60_000);
      });
      expect(linkedBefore).toBeLessThan(short.articles.length - 100);
      expectSameAsOneProcess(r, short);
    } finally {
      await redis.stop();
    }
  }, 240_000);
});
