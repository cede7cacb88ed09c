import { randomUUID } from 'node:crypto';
import type { FastifyInstance } from 'fastify';
import { describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { createLogger } from '../../src/logger.js';
import { type RedisStore, openRedisStore } from '../../src/store/redis/redis-store.js';
import { commitFixture } from '../contract/store-contract.js';
import { redisTestsRun } from '../helpers/redis.js';
import { openSse } from '../helpers/sse.js';

const REDIS_URL = 'redis://127.0.0.1:6379';

/** An api process of its own: its own store connection and server. */
async function apiProcess(partition: string): Promise<{ store: RedisStore; app: FastifyInstance; base: string }> {
  const store = await openRedisStore({ url: REDIS_URL, partition });
  const app = await buildApp({
    store,
    logger: createLogger('silent'),
    version: 'test',
    ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
    stream: { pollMs: 20 },
  });
  return { store, app, base: await app.listen({ port: 0, host: '127.0.0.1' }) };
}

const message = (n: number) => ({
  id: `msg_${n}`,
  type: n % 3 ? 'event.opened' : 'story.opened',
  body: `{"type":"event.opened","data":{"n":${n}}}`,
  created: '2026-10-07T22:00:00.000Z',
  subscribers: [],
});

describe.skipIf(!redisTestsRun())('the live stream on Redis, two api processes', () => {
  it('gives a client that left one process and resumed on the other with Last-Event-ID exactly what it missed', async () => {
    const partition = `test-${randomUUID()}`;
    const writer = await openRedisStore({ url: REDIS_URL, partition });
    const [one, two] = [await apiProcess(partition), await apiProcess(partition)];
    const commit = async (from: number, to: number) => {
      for (let n = from; n <= to; n++) await writer.commitArticle({ ...commitFixture(`r${n}`), messages: [message(n)] });
    };
    try {
      const first = await openSse(`${one.base}/api/stream?after=0`);
      await commit(1, 4);
      await first.until((es) => es.filter((e) => e.id).length === 4);
      first.close();
      const seen = first.events.filter((e) => e.id).map((e) => e.id!);
      // While the client is away, more happens; it comes back through the other process.
      await commit(5, 9);
      const again = await openSse(`${two.base}/api/stream`, { 'last-event-id': seen.at(-1)! });
      await again.until((es) => es.filter((e) => e.id).length === 5);
      await new Promise((r) => setTimeout(r, 100));
      again.close();
      expect(seen).toEqual(['1', '2', '3', '4']);
      expect(again.events.filter((e) => e.id)).toEqual(
        [5, 6, 7, 8, 9].map((n) => ({ id: String(n), event: message(n).type, data: message(n).body })),
      );
    } finally {
      for (const p of [one, two]) {
        await p.app.close();
        await p.store.close();
      }
      await writer.dropPartition();
      await writer.close();
    }
  });
});
