import { randomUUID } from 'node:crypto';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/load-config.js';
import type { Config } from '../../src/config/schema.js';
import { deadLetters, enqueueArticles, queueDepth } from '../../src/distribute/intake.js';
import { QueueLinker } from '../../src/distribute/linker.js';
import { startLinker, startWorker } from '../../src/distribute/roles.js';
import { AnalysisWorker } from '../../src/distribute/worker.js';
import { TfidfEmbedder } from '../../src/embed/tfidf-embedder.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import type { ArticleOutcome } from '../../src/pipeline/index.js';
import type { Article } from '../../src/records.js';
import { type Keyspace, keyspace } from '../../src/store/redis/keys.js';
import { connectRedis, openRedisStore } from '../../src/store/redis/redis-store.js';
import type { Nlp } from '../../src/text/nlp.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { redisTestsRun } from '../helpers/redis.js';
import { testConfig } from '../helpers/runtime.js';
import { recordingLogger, waitFor } from '../helpers/wait-for.js';
import { commitFixture } from '../contract/store-contract.js';

const run = redisTestsRun();
const REDIS_URL = 'redis://127.0.0.1:6379';
const silent = createLogger('silent');

const until = (check: () => Promise<boolean> | boolean, ms = 30_000): Promise<void> => waitFor('the condition', check, ms);

describe.skipIf(!run)('the work queue with bad and failing input', () => {
  let config: Readonly<Config>;
  let keys: Keyspace;
  let demo: Article[];

  beforeEach(async () => {
    const partition = `test-${randomUUID()}`;
    config = parseConfig({
      store: { kind: 'redis', redis: { url: REDIS_URL, partition } },
      queue: { claimIdleMs: 200, blockMs: 50, maxDeliveries: 3 },
      analysis: { threads: 0 },
      log: { level: 'silent' },
    });
    keys = keyspace(partition);
    demo ??= (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
  });

  afterEach(async () => {
    const store = await openRedisStore({ url: REDIS_URL, partition: config.store.redis.partition });
    await store.dropPartition();
    await store.close();
  });

  it('sends malformed, hostile and oversized entries to the dead-letter list with a reason, and stores the good ones around them', async () => {
    const redis = await connectRedis(REDIS_URL);
    const worker = await startWorker(config, silent);
    const linking = await startLinker(config, silent);
    const outcomes: ArticleOutcome[] = [];
    linking.linker.outcome$.subscribe((o) => outcomes.push(o));
    try {
      await enqueueArticles(redis, keys, [demo[0]!]);
      const bad = [
        'not json at all',
        JSON.stringify({ id: 'x' }),
        JSON.stringify({ ...demo[1], text: 42 }),
        `{"__proto__":{"polluted":true},${JSON.stringify(demo[1]).slice(1)}`,
        'x'.repeat(3 * 1024 * 1024),
      ];
      for (const body of bad) await redis.xadd(keys.intake, '*', 'article', body);
      await redis.xadd(keys.intake, '*', 'unexpected', 'field');
      await enqueueArticles(redis, keys, [demo[2]!]);
      await until(() => outcomes.length === 8);
      expect(outcomes.map((o) => o.status)).toEqual([
        'stored',
        'rejected',
        'rejected',
        'rejected',
        'rejected',
        'rejected',
        'rejected',
        'stored',
      ]);
      const letters = await deadLetters(redis, keys, 10);
      expect(letters).toHaveLength(6);
      for (const l of letters) expect(l.error).toMatch(/STRAND_ARTICLE_(INVALID|TOO_LARGE)|queued article/);
      expect(letters.map((l) => l.error).join('\n')).toMatch(/over 2097152/);
      expect(letters.every((l) => l.article.length <= 2000)).toBe(true);
      expect(({} as Record<string, unknown>).polluted).toBeUndefined();
      const store = linking.runtime.store;
      expect(await store.hasArticle(demo[0]!.id)).toBe(true);
      expect(await store.hasArticle(demo[2]!.id)).toBe(true);
      expect((await store.counts()).articles).toBe(2);
      expect(await queueDepth(redis, keys)).toMatchObject({ deadLetters: 6 });
    } finally {
      await worker.stop();
      await linking.stop();
      redis.disconnect();
    }
  });

  it('queues pushed articles for the workers (the api role) and the linker stores them', async () => {
    const { buildApp } = await import('../../src/api/build-app.js');
    const { openQueue } = await import('../../src/distribute/roles.js');
    const queue = await openQueue(config, silent);
    const store = await openRedisStore({ url: REDIS_URL, partition: config.store.redis.partition });
    const app = await buildApp({
      store,
      logger: silent,
      version: 'test',
      ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
      queue,
      push: {
        submit: async (a) => void (await queue.enqueue(a)),
        limits: { maxArticleChars: 200_000, maxPushItems: 10, maxPushBytes: 1 << 20 },
      },
    });
    const worker = await startWorker(config, silent);
    const linking = await startLinker(config, silent);
    try {
      const payload = [demo[3]!, demo[4]!].map((a) => ({
        id: a.id,
        outlet: a.outlet,
        title: a.title,
        url: a.url,
        published: a.published,
        text: a.text,
      }));
      const r = await app.inject({ method: 'POST', url: '/api/articles', payload });
      expect(r.json()).toMatchObject({ accepted: 2, rejected: 0 });
      await until(async () => (await store.counts()).articles === 2);
      expect(await store.hasArticle(demo[3]!.id)).toBe(true);
      expect((await app.inject('/api/queue')).json()).toMatchObject({ deadLetters: 0 });
    } finally {
      await app.close();
      await worker.stop();
      await linking.stop();
      await store.close();
      queue.close();
    }
  });

  it('reports a queued replay as the other processes work through it (the api role), and leaves no entry behind', async () => {
    const { openQueue } = await import('../../src/distribute/roles.js');
    const { QueuedReplay } = await import('../../src/distribute/replay-progress.js');
    const queue = await openQueue(config, silent);
    const store = await openRedisStore({ url: REDIS_URL, partition: config.store.redis.partition });
    const replay = new QueuedReplay(queue, store);
    const articles = demo.slice(0, 5);
    try {
      expect(await replay.status()).toEqual({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 });
      await replay.begin(articles.length);
      await queue.enqueue(articles);
      // Nobody has taken anything yet: queued is not finished.
      expect(await replay.status()).toEqual({ state: 'replaying', processed: 0, total: 5, stored: 0, rejected: 0 });
      const worker = await startWorker(config, silent);
      const linking = await startLinker(config, silent);
      try {
        await until(async () => (await replay.status()).state === 'finished');
        expect(await replay.status()).toEqual({ state: 'finished', processed: 5, total: 5, stored: 5, rejected: 0 });
        expect(await queue.depth()).toEqual({ intake: 0, analysed: 0, deadLetters: 0 });
      } finally {
        await worker.stop();
        await linking.stop();
      }
    } finally {
      await store.close();
      queue.close();
    }
  });

  it('retries an article that fails in analysis, then gives it up after queue.maxDeliveries', async () => {
    const redis = await connectRedis(REDIS_URL);
    const blocking = await connectRedis(REDIS_URL);
    const broken = {
      readDoc: () => {
        throw new Error('model crashed');
      },
    } as unknown as Nlp;
    const worker = new AnalysisWorker({ config, redis, blocking, keys, nlp: broken, embedder: new TfidfEmbedder(10), logger: silent });
    await worker.start();
    try {
      await enqueueArticles(redis, keys, [demo[0]!]);
      await until(async () => (await queueDepth(redis, keys)).deadLetters === 1);
      expect(worker.counts.failed).toBe(3);
      expect(worker.counts.dead).toBe(1);
      const [letter] = await deadLetters(redis, keys, 1);
      expect(letter!.error).toMatch(/model crashed \(after 3 deliveries\)/);
      expect(JSON.parse(letter!.article).id).toBe(demo[0]!.id);
      const [pending] = (await redis.xpending(keys.intake, 'workers')) as [number];
      expect(pending).toBe(0);
    } finally {
      await worker.stop();
      redis.disconnect();
    }
  });

  it('puts an article the store refuses on the dead-letter list instead of dropping it with its entry', async () => {
    const redis = await connectRedis(REDIS_URL);
    const blocking = await connectRedis(REDIS_URL);
    const { createRuntime } = await import('../../src/runtime.js');
    const { StrandError } = await import('../../src/errors.js');
    const runtime = await createRuntime(config, silent);
    runtime.store.commitArticles = async () => {
      throw new StrandError('STRAND_STORE_FAILED', 'OOM command not allowed when used memory > maxmemory');
    };
    const worker = await startWorker(config, silent);
    const linker = new QueueLinker({ ctx: runtime, redis, blocking, keys, logger: silent });
    const outcomes: ArticleOutcome[] = [];
    linker.outcome$.subscribe((o) => outcomes.push(o));
    await linker.start();
    try {
      await enqueueArticles(redis, keys, [demo[5]!]);
      await until(async () => (await queueDepth(redis, keys)).deadLetters === 1);
      expect(outcomes.map((o) => o.status)).toEqual(['rejected']);
      const [letter] = await deadLetters(redis, keys, 1);
      expect(letter!.error).toMatch(/^linker: .*OOM command not allowed/);
      expect(letter!.article).toContain(JSON.stringify(demo[5]!.id));
    } finally {
      await worker.stop();
      await linker.stop();
      redis.disconnect();
      await runtime.close();
    }
  });

  it('has the linker, the lease holder, apply retention.textDays when it starts', async () => {
    const store = await openRedisStore({ url: REDIS_URL, partition: config.store.redis.partition });
    const old = commitFixture('old-report');
    await store.commitArticle({ ...old, article: { ...old.article, published: '2020-01-06T08:00:00.000Z' } });
    const recent = commitFixture('new-report');
    await store.commitArticle({ ...recent, article: { ...recent.article, published: new Date().toISOString() } });
    const linking = await startLinker({ ...config, retention: { textDays: 30, notificationDays: null } }, silent);
    try {
      expect((await store.getArticle('old-report'))!.article.text).toBeNull();
      expect((await store.getArticle('new-report'))!.article.text).not.toBeNull();
    } finally {
      await linking.stop();
      await store.close();
    }
  });

  it('lets only one linker link a partition: a second waits for the lease and takes over when the first stops', async () => {
    const first = await startLinker(config, silent);
    const log = recordingLogger();
    const secondRt = await startLinkerLater(config, log.logger);
    try {
      // It has asked for the lease and been refused, not merely not asked yet.
      await waitFor('the second linker to find the lease held', () => log.said('another linker holds this partition'), 10_000);
      expect(secondRt.started).toBe(false);
      await first.stop();
      await until(() => secondRt.started, 10_000);
    } finally {
      await secondRt.stop();
    }
  });
});

describe.skipIf(!run)('the linker lease, when it lapses', () => {
  let config: Readonly<Config>;
  let keys: Keyspace;
  let demo: Article[];

  beforeEach(async () => {
    const partition = `test-${randomUUID()}`;
    config = parseConfig({
      store: { kind: 'redis', redis: { url: REDIS_URL, partition } },
      queue: { claimIdleMs: 200, blockMs: 50 },
      analysis: { threads: 0 },
      log: { level: 'silent' },
    });
    keys = keyspace(partition);
    demo ??= (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
  });

  afterEach(async () => {
    const store = await openRedisStore({ url: REDIS_URL, partition: config.store.redis.partition });
    await store.dropPartition();
    await store.close();
  });

  it('refuses a fenced write once the lease no longer holds its token, and writes nothing', async () => {
    const store = await openRedisStore({ url: REDIS_URL, partition: config.store.redis.partition });
    const redis = await connectRedis(REDIS_URL);
    try {
      store.fenceWrites('linker-a');
      await redis.set(keys.linkerLease, 'linker-a');
      expect(await store.commitArticle(commitFixture('held'))).toBe('stored');
      await redis.set(keys.linkerLease, 'linker-b');
      await expect(store.commitArticle(commitFixture('stale'))).rejects.toMatchObject({ code: 'STRAND_LEASE_LOST' });
      expect(await store.hasArticle('stale')).toBe(false);
      await redis.set(keys.consolidationOwed, '1');
      await expect(store.settleConsolidation(1)).rejects.toMatchObject({ code: 'STRAND_LEASE_LOST' });
      expect(await store.consolidationOwed()).toBe(1);
      expect((await store.counts()).articles).toBe(1);
    } finally {
      redis.disconnect();
      await store.close();
    }
  });

  it('pauses while another holds the lease, then takes it back and links what waited, with nothing dead-lettered', async () => {
    const redis = await connectRedis(REDIS_URL);
    const blocking = await connectRedis(REDIS_URL);
    const { createRuntime } = await import('../../src/runtime.js');
    const runtime = await createRuntime(config, silent);
    const store = runtime.store as Awaited<ReturnType<typeof openRedisStore>>;
    const worker = await startWorker(config, silent);
    const log = recordingLogger();
    const linker = new QueueLinker({
      ctx: runtime,
      redis,
      blocking,
      keys,
      logger: log.logger,
      leaseMs: 900,
      fence: (t) => store.fenceWrites(t),
    });
    const outcomes: ArticleOutcome[] = [];
    linker.outcome$.subscribe((o) => outcomes.push(o));
    await linker.start();
    try {
      await enqueueArticles(redis, keys, [demo[0]!]);
      await until(() => outcomes.length === 1);
      // Another process takes the lease (as after an outage longer than the lease).
      await redis.set(keys.linkerLease, 'another-linker', 'PX', 2500);
      await waitFor('the linker to notice the lease gone', () => log.said('lost the linker lease'), 5000);
      await enqueueArticles(redis, keys, [demo[1]!, demo[2]!]);
      // The worker has answered both (the linker could have linked them), yet none is stored.
      await waitFor('the worker to answer both', async () => (await redis.hlen(keys.answered)) >= 2, 5000);
      expect(await redis.get(keys.linkerLease)).toBe('another-linker');
      expect(await store.hasArticle(demo[1]!.id)).toBe(false);
      // The other lease lapses: this linker takes it back and links what waited.
      await until(() => outcomes.length === 3, 10_000);
      expect(outcomes.map((o) => o.status)).toEqual(['stored', 'stored', 'stored']);
      expect(await redis.get(keys.linkerLease)).not.toBe('another-linker');
      expect((await queueDepth(redis, keys)).deadLetters).toBe(0);
    } finally {
      await worker.stop();
      await linker.stop();
      redis.disconnect();
      await runtime.close();
    }
  });
});

/** Starts a linker without waiting for its lease; `started` turns true once it holds it. */
async function startLinkerLater(config: Readonly<Config>, logger = silent): Promise<{ started: boolean; stop(): Promise<void> }> {
  const redis = await connectRedis(REDIS_URL);
  const blocking = await connectRedis(REDIS_URL);
  const { createRuntime } = await import('../../src/runtime.js');
  const runtime = await createRuntime(config, silent);
  const linker = new QueueLinker({ ctx: runtime, redis, blocking, keys: keyspace(config.store.redis.partition), logger, leaseMs: 1500 });
  const handle = {
    started: false,
    stop: async () => {
      await linker.stop();
      await starting;
      redis.disconnect();
      await runtime.close();
    },
  };
  const starting = linker.start().then(() => {
    handle.started = true;
  });
  return handle;
}
