/** Long-running roles end within 5 s of SIGTERM even when their Redis has gone away (real processes, as in the integration test of signals). */
import { describe, expect, it } from 'vitest';
import { runAndStop } from '../helpers/cli-process.js';
import { redisTestsRun, startPrivateRedis } from '../helpers/redis.js';

describe.skipIf(!redisTestsRun()).concurrent('stopping the scale-out roles', () => {
  it.each(['worker', 'linker', 'api'])('serve --role %s, SIGTERM after its Redis went away: ends within 5 s, saying why', async (role) => {
    const redis = await startPrivateRedis();
    try {
      const env = { STRANDLINE_STORE: 'redis', STRANDLINE_REDIS_URL: redis.url };
      const r = await runAndStop(['serve', '--role', role, '--port', '0'], /running on Redis|api is serving/, 'SIGTERM', env, () =>
        redis.stop(),
      );
      expect(r.stopMs, r.stderr).toBeLessThan(5000);
      expect(r.stderr).toMatch(/SIGTERM: stopping the (worker|linker|api) process/);
    } finally {
      await redis.stop();
    }
  });
});
