/** Helpers for the tests that need Redis. */
import { randomUUID } from 'node:crypto';
import { createServer } from 'node:net';
import { inject } from 'vitest';
import { type RedisStore, openRedisStore } from '../../src/store/redis/redis-store.js';

/** Redis tests run when Redis answers, or always under STRANDLINE_REQUIRE_REDIS=1 (CI). */
export function redisTestsRun(): boolean {
  return inject('redisAvailable') || process.env.STRANDLINE_REQUIRE_REDIS === '1';
}

/** A free TCP port on 127.0.0.1 (for a redis-server a test starts). */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address() as { port: number };
      srv.close(() => resolve(port));
    });
  });
}

/** A store on a fresh partition of its own, dropped when closed. */
export async function freshRedisStore(url: string, cluster = false): Promise<RedisStore> {
  const store = await openRedisStore({ url, cluster, partition: `test-${randomUUID()}` });
  const close = store.close.bind(store);
  store.close = async () => {
    await store.dropPartition();
    await close();
  };
  return store;
}
