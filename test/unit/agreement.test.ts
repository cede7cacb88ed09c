import { describe, expect, it } from 'vitest';
import { krippendorffAlpha, type Unit } from '../../src/review/agreement.js';

// Krippendorff, "Computing Krippendorff's Alpha-Reliability" (2011): 4 coders x 12 units,
// null where a coder gave no value. Expected nominal 0.743 and interval 0.849 (the 2011
// paper; the nominal and interval figures are from memory there and were recomputed
// independently; ordinal and ratio are asserted in the tests of pln-fing-udelar/fast-krippendorff).
const CODERS = [
  [1, 2, 3, 3, 2, 1, 4, 1, 2, null, null, null],
  [1, 2, 3, 3, 2, 2, 4, 1, 2, 5, null, 3],
  [null, 3, 3, 3, 2, 3, 4, 2, 2, 5, 1, null],
  [1, 2, 3, 3, 2, 4, 4, 1, 2, 5, 1, null],
];
const UNITS: Unit[] = CODERS[0]!.map((_, u) => CODERS.map((coder) => coder[u]!));

describe("Krippendorff's alpha", () => {
  it('reproduces the published worked example: nominal 0.743, interval 0.849 (Krippendorff 2011)', () => {
    expect(krippendorffAlpha(UNITS, 'nominal')).toBeCloseTo(0.743421, 3);
    expect(krippendorffAlpha(UNITS, 'interval')).toBeCloseTo(0.849107, 3);
  });

  it('is 1 when every reviewer agrees, and leaves out units only one reviewer judged', () => {
    expect(
      krippendorffAlpha([
        ['same', 'same'],
        ['different', 'different', null],
        ['same', null, null],
      ]),
    ).toBe(1);
  });

  it('is about 0 when answers are independent of the unit, and below 0 when reviewers disagree systematically', () => {
    // Each unit gets one of each answer: the disagreement chance alone predicts.
    const units: Unit[] = Array.from({ length: 200 }, () => ['same', 'different']);
    expect(krippendorffAlpha(units)).toBeLessThan(0);
    const coin: Unit[] = Array.from({ length: 400 }, (_, i) => [i % 2 ? 'same' : 'different', (i >> 1) % 2 ? 'same' : 'different']);
    expect(Math.abs(krippendorffAlpha(coin))).toBeLessThan(0.01);
  });

  it('is undefined (NaN) without two pairable values or without variation', () => {
    expect(krippendorffAlpha([['same', null]])).toBeNaN();
    expect(krippendorffAlpha([['same', 'same']])).toBeNaN();
  });
});
