import { describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { parseConfig } from '../../src/config/load-config.js';
import { openQueue } from '../../src/distribute/roles.js';
import { createLogger } from '../../src/logger.js';
import { openStore } from '../../src/store/open-store.js';
import { redisTestsRun, startPrivateRedis } from '../helpers/redis.js';

const silent = createLogger('silent');

describe.skipIf(!redisTestsRun())('the API while its Redis is away', () => {
  it('answers 503 with Retry-After at once, queues nothing a client was told failed, and serves again when Redis is back', async () => {
    const redis = await startPrivateRedis();
    const config = parseConfig({ store: { kind: 'redis', redis: { url: redis.url, partition: 'outage' } }, log: { level: 'silent' } });
    const store = await openStore(config.store, silent, { failFast: true });
    const queue = await openQueue(config, silent, { failFast: true });
    const app = await buildApp({
      store,
      logger: silent,
      version: 'test',
      queue,
      ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
      push: { submit: async (a) => void (await queue.enqueue(a, { atomic: true })), limits: config.ingest },
    });
    const push = {
      method: 'POST' as const,
      url: '/api/articles',
      payload: {
        id: 'https://courier.example/levee',
        outlet: 'The Vellmouth Courier',
        title: 'Levee',
        text: 'The levee at Korrin Bay failed on Monday night.',
      },
    };
    try {
      expect((await app.inject({ url: '/api/events' })).statusCode).toBe(200);
      await redis.stop();
      for (const request of [{ url: '/api/events' }, { url: '/api/health' }, { url: '/api/queue' }, push]) {
        const started = Date.now();
        const res = await app.inject(request);
        expect(Date.now() - started).toBeLessThan(1000);
        expect(res.statusCode).toBe(503);
        expect(res.headers['retry-after']).toBe('5');
        expect(res.json().error).toMatchObject({
          code: 'STRAND_STORE_UNAVAILABLE',
          message: expect.stringMatching(/a push was not queued/),
        });
      }
      // The page itself does not need the store.
      expect((await app.inject({ url: '/' })).statusCode).toBe(200);
      await redis.restart();
      for (let i = 0; i < 100 && store.unavailable(); i++) await new Promise((r) => setTimeout(r, 100));
      for (let i = 0; i < 100 && (await queue.depth().catch(() => null)) === null; i++) await new Promise((r) => setTimeout(r, 100));
      expect((await app.inject({ url: '/api/events' })).statusCode).toBe(200);
      // The refused push was never queued, even after the reconnection.
      expect((await queue.depth()).intake).toBe(0);
      expect((await app.inject(push)).json()).toMatchObject({ accepted: 1 });
      expect((await queue.depth()).intake).toBe(1);
    } finally {
      await app.close();
      queue.close();
      await store.close();
      await redis.stop();
    }
  }, 60_000);
});
