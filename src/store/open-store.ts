/** Opens the store the configuration names. */
import type { Config } from '../config/schema.js';
import type { Logger } from '../logger.js';
import { openRedisStore } from './redis/redis-store.js';
import { openSqliteStore } from './sqlite/sqlite-store.js';
import type { Store } from './store.js';

/**
 * Opens the store the configuration names. `failFast`: a Redis store's commands fail at
 * once while Redis is away (the API's store) instead of waiting for it (the pipeline's).
 */
export async function openStore(c: Config['store'], logger?: Logger, o: { failFast?: boolean } = {}): Promise<Store> {
  if (c.kind === 'sqlite') return openSqliteStore(c.path, { logger: logger?.child({ stage: 'store' }) });
  const log = logger?.child({ stage: 'store' });
  return openRedisStore({
    url: c.redis.url,
    cluster: c.redis.cluster,
    partition: c.redis.partition,
    failFast: o.failFast ?? false,
    onError: (err) =>
      log?.warn(
        { err: err.message },
        o.failFast
          ? 'Redis connection error; the API answers 503 until it is back'
          : 'Redis connection error; commands wait for it to return',
      ),
  });
}
