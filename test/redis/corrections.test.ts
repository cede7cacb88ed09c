/** Corrections in a scale-out deployment: an api process queues them, the linker makes them in its turn and answers. */
import { randomUUID } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/load-config.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { CorrectionQueue } from '../../src/distribute/correction-queue.js';
import { openQueue, startLinker } from '../../src/distribute/roles.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import { createRuntime } from '../../src/runtime.js';
import { keyspace } from '../../src/store/redis/keys.js';
import { openRedisStore } from '../../src/store/redis/redis-store.js';
import { thresholdAdjustments } from '../../src/link/threshold-adjustments.js';
import { redisTestsRun } from '../helpers/redis.js';
import { runArticles } from '../helpers/runtime.js';

describe.skipIf(!redisTestsRun())('corrections on Redis, queued by an api process', () => {
  it('are made by the linker in its turn and answered, refusals included', async () => {
    const partition = `test-${randomUUID()}`;
    const config = parseConfig({
      store: { kind: 'redis', redis: { url: 'redis://127.0.0.1:6379', partition } },
      link: { consolidateEvery: 0 },
      analysis: { threads: 0 },
      log: { level: 'silent' },
    });
    const logger = createLogger('silent');
    const rt = await createRuntime(config, logger);
    await runArticles(rt, (await readReplayInput([DEMO_FEEDS], config.ingest)).articles.slice(0, 20));
    await rt.close();
    const linking = await startLinker(config, logger);
    const api = await openQueue(config, logger);
    const store = await openRedisStore({ url: 'redis://127.0.0.1:6379', partition });
    try {
      const queue = new CorrectionQueue(api.redis, keyspace(partition));
      const [a, b] = (await store.listEvents({ limit: 2, offset: 0, sort: 'mentions' })).events.map((e) => e.id);
      const merged = await queue.submit({ kind: 'merge', from: b!, into: a! }, { by: 'key_000000000001', note: null });
      expect(merged).toMatchObject({ kind: 'merge', by: 'key_000000000001', events: [b, a] });
      expect(await store.getEvent(b!)).toBeNull();
      // The linker's memory changed with the store: the same merge again is refused.
      await expect(queue.submit({ kind: 'merge', from: b!, into: a! }, { by: 'local', note: null })).rejects.toMatchObject({
        code: 'STRAND_NOT_FOUND',
      });
      const undone = await queue.submit({ kind: 'undo', correction: merged.id }, { by: 'local', note: null });
      expect(undone.undoes).toBe(merged.id);
      expect(await store.getEvent(b!)).not.toBeNull();
      // Hostile or malformed entries on the queue are answered or dropped; the linker goes on.
      await api.redis.rpush(
        keyspace(partition).correctionRequests,
        'not json',
        JSON.stringify({ id: 'x', req: { kind: 'explode' }, author: {} }),
      );
      const after = await queue.submit({ kind: 'merge', from: b!, into: a! }, { by: 'local', note: null });
      expect(after.kind).toBe('merge');
      // A threshold move goes the same way: the linker holds it (the same move again is refused) and the store lists it.
      const move = { kind: 'threshold', offset: 0.04, round: null, heldOutF1: null } as const;
      expect((await queue.submit(move, { by: 'local', note: null })).threshold).toMatchObject({ from: 0, to: 0.04 });
      await expect(queue.submit(move, { by: 'local', note: null })).rejects.toMatchObject({ code: 'STRAND_CORRECTION_CONFLICT' });
      await expect(queue.submit({ ...move, offset: Number.NaN }, { by: 'local', note: null })).rejects.toMatchObject({
        code: 'STRAND_REQUEST_INVALID',
      });
      expect((await thresholdAdjustments(store, 10)).offset).toBe(0.04);
      expect(await api.redis.llen(keyspace(partition).correctionRequests)).toBe(0);
    } finally {
      await linking.stop();
      await store.dropPartition();
      await store.close();
      api.close();
    }
  }, 60_000);
});
