import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { topN } from '../../src/top-n.js';

describe('topN', () => {
  it('gives the first n of a stable sort, on random numbers', () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 0, max: 5 }), { maxLength: 50 }), fc.integer({ min: 0, max: 12 }), (xs, n) => {
        const items = xs.map((v, i) => ({ v, i }));
        const sorted = [...items].sort((a, b) => b.v - a.v).slice(0, n);
        expect(topN(items, n, (a, b) => a.v > b.v)).toEqual(sorted);
      }),
      { numRuns: 300 },
    );
  });

  it('gives nothing for n 0, and everything when n exceeds the items', () => {
    expect(topN([3, 1, 2], 0, (a, b) => a > b)).toEqual([]);
    expect(topN([3, 1, 2], 10, (a, b) => a > b)).toEqual([3, 2, 1]);
  });
});
