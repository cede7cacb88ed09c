/** Opens the store the configuration names. */
import type { Config } from '../config/schema.js';
import type { Logger } from '../logger.js';
import { openRedisStore } from './redis/redis-store.js';
import { openSqliteStore } from './sqlite/sqlite-store.js';
import type { Store } from './store.js';

export async function openStore(c: Config['store'], logger?: Logger): Promise<Store> {
  if (c.kind === 'sqlite') return openSqliteStore(c.path, { logger: logger?.child({ stage: 'store' }) });
  const log = logger?.child({ stage: 'store' });
  return openRedisStore({ url: c.redis.url, cluster: c.redis.cluster, partition: c.redis.partition, onError: (err) => log?.warn({ err: err.message }, 'Redis connection error; commands wait for it to return') });
}
