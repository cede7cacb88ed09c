import { describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import type { QueueView } from '../../src/status.js';
import { createLogger } from '../../src/logger.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';

const idle = () => ({ state: 'idle' as const, processed: 0, total: 0, stored: 0, rejected: 0 });

describe('the queue routes of a scale-out deployment', () => {
  it('show what waits where and the dead letters with their errors, and are in the OpenAPI document', async () => {
    const queue: QueueView = {
      depth: async () => ({ intake: 12, analysed: 3, deadLetters: 1 }),
      deadLetters: async (limit) =>
        [{ id: '1-0', entry: '0-1', error: 'STRAND_ARTICLE_INVALID: queued article is not JSON', article: 'not json' }].slice(0, limit),
    };
    const app = await buildApp({
      store: openSqliteStore(':memory:'),
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: idle,
      queue,
    });
    try {
      expect((await app.inject('/api/queue')).json()).toEqual({ intake: 12, analysed: 3, deadLetters: 1 });
      const dead = await app.inject('/api/queue/dead-letters?limit=5');
      expect(dead.json().entries[0]).toEqual({
        id: '1-0',
        entry: '0-1',
        error: 'STRAND_ARTICLE_INVALID: queued article is not JSON',
        article: 'not json',
      });
      expect((await app.inject('/api/queue/dead-letters?limit=0')).statusCode).toBe(400);
      expect((await app.inject('/api/queue/dead-letters?limit=abc')).statusCode).toBe(400);
      const paths = (await app.inject('/openapi.json')).json().paths;
      expect(paths).toHaveProperty(['/api/queue']);
      expect(paths).toHaveProperty(['/api/queue/dead-letters']);
    } finally {
      await app.close();
    }
  });

  it('are absent from a single process', async () => {
    const app = await buildApp({ store: openSqliteStore(':memory:'), logger: createLogger('silent'), version: 'test', ingestStatus: idle });
    try {
      expect((await app.inject('/api/queue')).statusCode).toBe(404);
    } finally {
      await app.close();
    }
  });
});
