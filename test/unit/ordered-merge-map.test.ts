import { lastValueFrom, from, toArray } from 'rxjs';
import { describe, expect, it } from 'vitest';
import { orderedMergeMap } from '../../src/ordered-merge-map.js';

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

describe('orderedMergeMap', () => {
  it('emits results in input order although later projections finish first', async () => {
    const delays = [30, 5, 20, 0, 10];
    const out = await lastValueFrom(
      from(delays).pipe(
        orderedMergeMap(async (d) => (await sleep(d), d), 5),
        toArray(),
      ),
    );
    expect(out).toEqual(delays);
  });

  it('never runs more than `concurrency` projections at once', async () => {
    let running = 0;
    let peak = 0;
    const out = await lastValueFrom(
      from(Array.from({ length: 20 }, (_, i) => i)).pipe(
        orderedMergeMap(async (i) => {
          peak = Math.max(peak, ++running);
          await sleep(i % 3);
          running--;
          return i * 2;
        }, 4),
        toArray(),
      ),
    );
    expect(out).toEqual(Array.from({ length: 20 }, (_, i) => i * 2));
    expect(peak).toBe(4);
  });

  it('passes a failed projection on as an error', async () => {
    const run = lastValueFrom(
      from([1, 2, 3]).pipe(
        orderedMergeMap(async (i) => {
          if (i === 2) throw new Error('two');
          return i;
        }, 3),
      ),
    );
    await expect(run).rejects.toThrow('two');
  });
});
