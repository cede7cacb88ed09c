import { Redis } from 'ioredis';
import { describe, expect, inject, it } from 'vitest';

// Redis tests run when Redis answers, or always under STRANDLINE_REQUIRE_REDIS=1 (CI), where
// an unreachable Redis must fail the run rather than skip (test/global-setup.ts says which).
const run = inject('redisAvailable') || process.env.STRANDLINE_REQUIRE_REDIS === '1';

describe.skipIf(!run)('the Redis the tests use', () => {
  it('answers on 127.0.0.1:6379 and keeps what it is given', async () => {
    const redis = new Redis({ host: '127.0.0.1', port: 6379, lazyConnect: true, maxRetriesPerRequest: 1, retryStrategy: () => null });
    try {
      await redis.connect();
      expect(await redis.ping()).toBe('PONG');
      const key = `{strandline-test}:probe:${process.pid}`;
      await redis.set(key, 'ok', 'EX', 10);
      expect(await redis.get(key)).toBe('ok');
      await redis.del(key);
    } finally {
      redis.disconnect();
    }
  });
});
