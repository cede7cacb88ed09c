import { describe, expect, it } from 'vitest';
import { RetentionSweeper } from '../../src/store/retention-sweeper.js';

/** A store that erases `batches` in turn, counts compactions and records prunings. */
function fakeStore(batches: number[], failWith?: Error, pruneFailWith?: Error) {
  const calls = { erasedBefore: [] as string[], compactions: 0, prunedBefore: [] as string[] };
  return {
    calls,
    store: {
      async eraseTextBefore(day: string) {
        if (failWith) throw failWith;
        calls.erasedBefore.push(day);
        return batches.shift() ?? 0;
      },
      async compact() {
        calls.compactions++;
      },
      async pruneNotifications(before: string) {
        if (pruneFailWith) throw pruneFailWith;
        calls.prunedBefore.push(before);
        return 2;
      },
    },
  };
}

const quiet = { info: () => undefined, error: () => undefined };
const HOUR = 3_600_000;

describe('the retention sweeper', () => {
  it('erases text older than textDays, counted back from today', async () => {
    const { store, calls } = fakeStore([3]);
    const sweeper = new RetentionSweeper({
      store,
      textDays: 30,
      notificationDays: null,
      logger: quiet,
      now: () => new Date('2026-12-03T10:00:00Z'),
    });
    expect(await sweeper.sweep()).toEqual({ erased: 3, compacted: true, pruned: 0 });
    expect(calls.erasedBefore).toEqual(['2026-11-03']);
  });

  it('compacts at the first erasure, then at most once a day, and only after erasures', async () => {
    let now = Date.parse('2026-12-03T10:00:00Z');
    const { store, calls } = fakeStore([5, 2, 0, 0, 4, 0]);
    const sweeper = new RetentionSweeper({ store, textDays: 7, notificationDays: null, logger: quiet, now: () => new Date(now) });
    const hourly = async () => {
      const r = await sweeper.sweep();
      now += HOUR;
      return r.compacted;
    };
    expect(await hourly()).toBe(true); // 5 erased: compacted at once
    expect(await hourly()).toBe(false); // 2 erased within the day: waits
    expect(await hourly()).toBe(false);
    now += 22 * HOUR;
    expect(await hourly()).toBe(true); // a day on: the 2 waiting are compacted away
    now += 25 * HOUR;
    expect(await hourly()).toBe(true); // 4 erased
    now += 25 * HOUR;
    expect(await hourly()).toBe(false); // nothing erased since: nothing to compact
    expect(calls.compactions).toBe(3);
  });

  it('does nothing when text and notifications are kept for ever', async () => {
    const { store, calls } = fakeStore([9]);
    const sweeper = new RetentionSweeper({ store, textDays: null, notificationDays: null, logger: quiet });
    await sweeper.start();
    expect(await sweeper.sweep()).toEqual({ erased: 0, compacted: false, pruned: 0 });
    await sweeper.stop();
    expect(calls.erasedBefore).toEqual([]);
    expect(calls.prunedBefore).toEqual([]);
  });

  it('deletes notifications settled more than notificationDays ago, to the millisecond, and erases no text unless told', async () => {
    const { store, calls } = fakeStore([9]);
    const sweeper = new RetentionSweeper({
      store,
      textDays: null,
      notificationDays: 30,
      logger: quiet,
      now: () => new Date('2026-12-03T10:00:00.500Z'),
    });
    expect(await sweeper.sweep()).toEqual({ erased: 0, compacted: false, pruned: 2 });
    expect(calls.prunedBefore).toEqual(['2026-11-03T10:00:00.500Z']);
    expect(calls.erasedBefore).toEqual([]);
  });

  it('logs a failing sweep and resolves, so a store outage cannot end the process', async () => {
    const errors: unknown[] = [];
    const { store } = fakeStore([], new Error('disk I/O error'));
    const sweeper = new RetentionSweeper({
      store,
      textDays: 7,
      notificationDays: null,
      logger: { info: () => undefined, error: (o: unknown) => errors.push(o) },
    });
    expect(await sweeper.sweep()).toEqual({ erased: 0, compacted: false, pruned: 0 });
    expect(errors).toEqual([{ err: 'disk I/O error' }]);
  });

  it('prunes notifications even when erasing text fails, and erases text even when pruning fails', async () => {
    const eraseFails = fakeStore([], new Error('disk I/O error'));
    const a = new RetentionSweeper({ store: eraseFails.store, textDays: 7, notificationDays: 30, logger: quiet });
    expect(await a.sweep()).toMatchObject({ erased: 0, pruned: 2 });
    const pruneFails = fakeStore([4], undefined, new Error('READONLY'));
    const b = new RetentionSweeper({ store: pruneFails.store, textDays: 7, notificationDays: 30, logger: quiet });
    expect(await b.sweep()).toMatchObject({ erased: 4, pruned: 0 });
  });
});
