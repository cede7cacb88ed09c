/**
 * The processes of a scale-out deployment (store.kind redis). `api` serves queries and
 * queues feeds; `worker` analyses (run several, on several machines); `linker` links,
 * notifies and applies retention (one per partition, guarded by a lease). `all` is the
 * single process and does not come through here.
 */
import type { Config } from '../config/schema.js';
import { createEmbedder } from '../embed/create-embedder.js';
import { StrandError } from '../errors.js';
import type { Logger } from '../logger.js';
import { createRuntime, type Runtime } from '../runtime.js';
import { keyspace } from '../store/redis/keys.js';
import { RedisStore } from '../store/redis/redis-store.js';
import { FAIL_FAST, type RedisClient, closeClient, connectRedis } from '../store/redis/connect.js';
import { createNlp } from '../text/nlp.js';
import { deadLetters, enqueueArticles, queueDepth } from './intake.js';
import type { QueueView } from '../status.js';
import type { Article } from '../records.js';
import { RetentionSweeper } from '../store/retention-sweeper.js';
import { QueueLinker } from './linker.js';
import { AnalysisWorker } from './worker.js';

/** Refuses a split role without the shared store. */
export function checkRole(config: Readonly<Config>): void {
  if (config.process.role !== 'all' && config.store.kind !== 'redis') {
    throw new StrandError(
      'STRAND_CONFIG_INVALID',
      `process.role ${config.process.role} shares its work through Redis: set store.kind to redis (or STRANDLINE_STORE=redis)`,
    );
  }
}

/** A running worker: analyses queued articles until stopped. */
export async function startWorker(config: Readonly<Config>, logger: Logger): Promise<{ worker: AnalysisWorker; stop(): Promise<void> }> {
  // The model first: a missing model stops start-up before any connection is open.
  const embedder = await createEmbedder(config.embed);
  const onError = redisErrorLog(logger);
  const [redis, blocking] = await Promise.all([
    connectRedis(config.store.redis, {}, onError),
    connectRedis(config.store.redis, {}, onError),
  ]);
  const worker = new AnalysisWorker({
    config,
    redis,
    blocking,
    keys: keyspace(config.store.redis.partition),
    nlp: createNlp(),
    embedder,
    logger,
  });
  await worker.start();
  logger.child({ stage: 'worker' }).info({ consumer: worker.name }, 'worker reading the intake stream');
  return {
    worker,
    async stop() {
      await worker.stop();
      redis.disconnect();
    },
  };
}

/** A running linker: waits for the partition's lease, then links queued work until stopped. */
/** Starts the partition's linker; `o.leaseMs` shortens its lease (15 s) where a test outlives it. */
export async function startLinker(
  config: Readonly<Config>,
  logger: Logger,
  o: { leaseMs?: number } = {},
): Promise<{ linker: QueueLinker; runtime: Runtime; stop(): Promise<void> }> {
  // The workers analyse; the linker needs no analysis threads of its own.
  const runtime = await createRuntime({ ...config, analysis: { threads: 0 } }, logger);
  const onError = redisErrorLog(logger);
  let redis: RedisClient;
  let blocking: RedisClient;
  try {
    [redis, blocking] = await Promise.all([connectRedis(config.store.redis, {}, onError), connectRedis(config.store.redis, {}, onError)]);
  } catch (err) {
    await runtime.close();
    throw err;
  }
  const store = runtime.store;
  if (!(store instanceof RedisStore)) throw new StrandError('STRAND_CONFIG_INVALID', 'the linker role needs the Redis store');
  const linker = new QueueLinker({
    ctx: runtime,
    redis,
    blocking,
    keys: keyspace(config.store.redis.partition),
    logger,
    fence: (token) => store.fenceWrites(token),
    leaseMs: o.leaseMs,
  });
  await linker.start();
  logger.child({ stage: 'linker' }).info('linker holds the partition lease');
  // Retention is the lease holder's job, so one process per partition erases.
  const sweeper = new RetentionSweeper({
    store: runtime.store,
    textDays: config.retention.textDays,
    notificationDays: config.retention.notificationDays,
    logger,
  });
  await sweeper.start();
  return {
    linker,
    runtime,
    async stop() {
      await sweeper.stop();
      await linker.stop();
      redis.disconnect();
      await runtime.close();
    },
  };
}

/** The queue as the API and the replaying api process see it; `failFast` for the API (connect.ts FAIL_FAST). */
export async function openQueue(
  config: Readonly<Config>,
  logger: Logger,
  o: { failFast?: boolean } = {},
): Promise<
  QueueView & { enqueue(articles: readonly Article[], o?: { atomic?: boolean }): Promise<string[]>; close(): void; redis: RedisClient }
> {
  const redis = await connectRedis(config.store.redis, o.failFast ? FAIL_FAST : {}, redisErrorLog(logger));
  const keys = keyspace(config.store.redis.partition);
  return {
    redis,
    depth: () => queueDepth(redis, keys),
    deadLetters: (limit) => deadLetters(redis, keys, limit),
    enqueue: (articles, e) => enqueueArticles(redis, keys, articles, e),
    close: () => void closeClient(redis),
  };
}

function redisErrorLog(logger: Logger): (err: Error) => void {
  const log = logger.child({ stage: 'redis' });
  return (err) => log.warn({ err: err.message }, 'Redis connection error; commands wait for it to return');
}
