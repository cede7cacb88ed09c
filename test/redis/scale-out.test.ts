import { hostname } from 'node:os';
import { beforeAll, describe, expect, it } from 'vitest';
import { redisTestsRun, startPrivateRedis } from '../helpers/redis.js';
import { type Reference, distributedRun, expectSameAsOneProcess, referenceOf, scaleOutArticles } from '../helpers/scale-out.js';
import { waitFor } from '../helpers/wait-for.js';

const REDIS_URL = 'redis://127.0.0.1:6379';

describe.skipIf(!redisTestsRun())('scale-out over Redis: three worker processes and one linker', () => {
  let full: Reference;

  beforeAll(async () => {
    full = await referenceOf(await scaleOutArticles());
  }, 120_000);

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
});
