import { describe, expect, it } from 'vitest';
import { redisTestsRun, startPrivateRedis } from '../helpers/redis.js';
import { type Reference, distributedRun, expectSameAsOneProcess, referenceOf, scaleOutArticles } from '../helpers/scale-out.js';

// A file of its own: a minute of outage runs beside the other scale-out tests, not after them.
describe.skipIf(!redisTestsRun())('scale-out over Redis, through an outage longer than the linker lease', () => {
  let short: Reference | undefined;
  const reference = async (): Promise<Reference> => (short ??= await referenceOf((await scaleOutArticles()).slice(0, 400)));

  // Four times the linker's lease (15 s): the lease lapses during the outage and the linker
  // must take it back by itself.
  it('links every article afterwards, with no manual step, when Redis is down for 60 s mid-run', async () => {
    const redis = await startPrivateRedis();
    try {
      let linkedBefore = 0;
      const r = await distributedRun(redis.url, (await reference()).articles, 60, undefined, async ({ outcomes }) => {
        linkedBefore = outcomes.length;
        await redis.restart(60_000);
      });
      expect(linkedBefore).toBeLessThan((await reference()).articles.length - 100);
      expectSameAsOneProcess(r, await reference());
    } finally {
      await redis.stop();
    }
  }, 240_000);
});
