import { randomUUID } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { createLogger } from '../../src/logger.js';
import { openRedisStore } from '../../src/store/redis/redis-store.js';
import { commitFixture } from '../contract/store-contract.js';
import { redisTestsRun } from '../helpers/redis.js';
import { openSse } from '../helpers/sse.js';

const REDIS_URL = 'redis://127.0.0.1:6379';

describe.skipIf(!redisTestsRun())('the live stream on Redis', () => {
  it('is served alike by every api process: another process’s commit reaches a stream it does not hold in memory', async () => {
    const partition = `test-${randomUUID()}`;
    const writer = await openRedisStore({ url: REDIS_URL, partition });
    const reader = await openRedisStore({ url: REDIS_URL, partition });
    const app = await buildApp({
      store: reader,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
      stream: { pollMs: 20 },
    });
    const base = await app.listen({ port: 0, host: '127.0.0.1' });
    const s = await openSse(`${base}/api/stream?after=0`);
    try {
      const message = {
        id: 'msg_r1',
        type: 'event.opened',
        body: '{"type":"event.opened","data":{}}',
        created: '2026-10-07T22:00:00.000Z',
        subscribers: [],
      };
      await writer.commitArticle({ ...commitFixture('r1'), messages: [message] });
      await s.until((es) => es.some((e) => e.id !== undefined));
      expect(s.events.filter((e) => e.id !== undefined)).toEqual([{ id: '1', event: 'event.opened', data: message.body }]);
    } finally {
      s.close();
      await app.close();
      await reader.close();
      await writer.dropPartition();
      await writer.close();
    }
  });
});
