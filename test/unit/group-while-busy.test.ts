import { Subject, defer, from, lastValueFrom, toArray } from 'rxjs';
import { describe, expect, it } from 'vitest';
import { groupWhileBusy } from '../../src/pipeline/group-while-busy.js';

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

describe('groupWhileBusy', () => {
  it('groups what waits while the stage is busy, up to the limit, and keeps input order', async () => {
    const groups: number[][] = [];
    const out = await lastValueFrom(
      from(Array.from({ length: 10 }, (_, i) => i)).pipe(
        groupWhileBusy(
          () => 4,
          20,
          (g) =>
            defer(async () => {
              groups.push(g);
              await sleep(5);
              return g.map((x) => x * 10);
            }),
        ),
        toArray(),
      ),
    );
    // A synchronous source is all waiting at once: full groups, the remainder at the end.
    expect(groups).toEqual([
      [0, 1, 2, 3],
      [4, 5, 6, 7],
      [8, 9],
    ]);
    expect(out).toEqual([
      [0, 10, 20, 30],
      [40, 50, 60, 70],
      [80, 90],
    ]);
  });

  it('asks for the limit before each group (the link stage ends a group where a pass is due)', async () => {
    const limits = [3, 1, 5];
    // A synchronous source is all there before the first group: each limit shapes one group.
    const groups: number[][] = [];
    await lastValueFrom(
      from([1, 2, 3, 4, 5, 6, 7]).pipe(
        groupWhileBusy(
          () => limits[groups.length] ?? 10,
          20,
          (g) => (groups.push(g), g),
        ),
        toArray(),
      ),
    );
    expect(groups).toEqual([[1, 2, 3], [4], [5, 6, 7]]);
  });

  it('lets a lone item wait at most the linger time for others to join it', async () => {
    const source = new Subject<number>();
    const groups: { items: number[]; at: number }[] = [];
    const t0 = performance.now();
    const done = lastValueFrom(
      source.pipe(
        groupWhileBusy(
          () => 8,
          40,
          (g) => (groups.push({ items: g, at: performance.now() - t0 }), g),
        ),
        toArray(),
      ),
    );
    source.next(1);
    await sleep(10);
    source.next(2);
    await sleep(80);
    source.next(3);
    source.complete();
    expect(await done).toEqual([1, 2, 3]);
    // Item 2 joined item 1 within its 40 ms; item 3, 80 ms later, found the group gone.
    expect(groups.map((g) => g.items)).toEqual([[1, 2], [3]]);
    // The first group went when its oldest had waited its 40 ms, not at the next item.
    expect(groups[0]!.at).toBeGreaterThanOrEqual(35);
  });

  it('ends the stream with the error of a failed group, and runs no group after it', async () => {
    const seen: number[][] = [];
    const run = lastValueFrom(
      from([1, 2, 3, 4]).pipe(
        groupWhileBusy(
          () => 2,
          20,
          (g) =>
            defer(async () => {
              seen.push(g);
              if (g.includes(1)) throw new Error('store down');
              return g;
            }),
        ),
        toArray(),
      ),
    );
    await expect(run).rejects.toThrow('store down');
    await sleep(10);
    expect(seen).toEqual([[1, 2]]);
  });

  it('passes an error of the source on', async () => {
    const source = new Subject<number>();
    const run = lastValueFrom(
      source.pipe(
        groupWhileBusy(
          () => 2,
          0,
          (g) => g,
        ),
      ),
    );
    source.error(new Error('feed broke'));
    await expect(run).rejects.toThrow('feed broke');
  });
});
