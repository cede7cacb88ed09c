import { describe, expect, it } from 'vitest';
import { CopyIndex } from '../../src/copies/copy-index.js';
import { SKETCH_SIZE, estimateJaccard, exactJaccard, shingles, sketch } from '../../src/copies/minhash.js';

const BASE =
  'The Vellmouth harbour board met on Tuesday and approved the dredging of berth four at the Korrin pier after months of delay caused by silt and a dispute over costs with the port authority';

describe('shingles', () => {
  it('are the distinct 4-word sequences of the lower-cased words, punctuation ignored', () => {
    expect(shingles('One two three four five.').size).toBe(2);
    expect(shingles('One, TWO three four five')).toEqual(shingles('one two three four five'));
    expect(shingles('a b a b a b').size).toBe(2);
    expect(shingles('too short').size).toBe(1);
    expect(shingles('').size).toBe(0);
  });
});

describe('the MinHash estimate against the exact Jaccard similarity', () => {
  it('stays within four standard errors, sqrt(J(1 - J) / K), on sets of every degree of overlap', () => {
    // Broder 1997: Pr[min-hashes agree] = J; with K independent hashes the share of agreeing
    // positions has standard error sqrt(J(1 - J) / K) (checks.md: about 1 / sqrt(K)).
    const words = BASE.split(' ');
    let sumError = 0;
    let n = 0;
    for (let keep = 0; keep <= words.length; keep += 3) {
      const other = [...words.slice(0, keep), ...words.slice(keep).map((w) => `${w}x`)].join(' ');
      const [a, b] = [shingles(BASE), shingles(other)];
      const exact = exactJaccard(a, b);
      const estimate = estimateJaccard(sketch(a), sketch(b));
      const se = Math.sqrt((exact * (1 - exact)) / SKETCH_SIZE);
      expect(Math.abs(estimate - exact)).toBeLessThanOrEqual(4 * se + 1e-9);
      sumError += Math.abs(estimate - exact);
      n++;
    }
    expect(sumError / n).toBeLessThan(0.04);
  });

  it('gives 1 for identical sets and 0 for disjoint ones', () => {
    expect(estimateJaccard(sketch(shingles(BASE)), sketch(shingles(BASE)))).toBe(1);
    expect(
      estimateJaccard(sketch(shingles(BASE)), sketch(shingles('Completely different words make another text entirely for sure'))),
    ).toBe(0);
    expect(exactJaccard(new Set([1, 2, 3]), new Set([2, 3, 4]))).toBe(0.5);
  });
});

describe('the copy index', () => {
  const options = { nearThreshold: 0.5, windowDays: 7 };
  const day = 86_400_000;

  it('finds the earlier article an edited copy comes from, and the closest one when several match', () => {
    const idx = new CopyIndex(options);
    idx.add('original', sketch(shingles(BASE)), 0);
    idx.add(
      'unrelated',
      sketch(shingles('Fire crews fought a warehouse blaze at the Korrin pier through the night while smoke drifted over the old town')),
      0,
    );
    const edited = `${BASE} the board said`;
    expect(idx.find(sketch(shingles(edited)), day)).toEqual({ original: 'original', similarity: expect.any(Number) });
    idx.add('first copy', sketch(shingles(edited)), day);
    expect(idx.find(sketch(shingles(edited)), 2 * day)!.original).toBe('first copy');
  });

  it('never matches across more than the window, and forgets what fell far out of it', () => {
    const idx = new CopyIndex(options);
    idx.add('old', sketch(shingles(BASE)), 0);
    expect(idx.find(sketch(shingles(BASE)), 8 * day)).toBeNull();
    for (let i = 0; i < 400; i++) idx.add(`later ${i}`, sketch(shingles(`${BASE} ${i}`)), 30 * day + i);
    expect(idx.size).toBe(400);
  });
});
