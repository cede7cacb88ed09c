import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { extendedBcubed } from '../../src/eval/extended-bcubed.js';
import { b3Score } from '../../src/eval/partition-metrics.js';

const M = (o: Record<string, string[]>) => new Map(Object.entries(o).map(([k, v]) => [k, new Set(v)]));

// Definitions: Amigó et al. 2009, "A comparison of extrinsic clustering evaluation metrics
// based on formal constraints", Information Retrieval 12(4), section 5 (extended BCubed).
describe('extended BCubed', () => {
  it('reproduces a worked example with overlapping gold and system memberships', () => {
    // Items 1..4. Gold categories: 1:{A}, 2:{A,B}, 3:{B}, 4:{B}.
    // System clusters:             1:{X}, 2:{X},   3:{X,Y}, 4:{Y}.
    const gold = M({ '1': ['A'], '2': ['A', 'B'], '3': ['B'], '4': ['B'] });
    const sys = M({ '1': ['X'], '2': ['X'], '3': ['X', 'Y'], '4': ['Y'] });
    // Precision, item by item, over partners sharing a cluster (the item itself included):
    //   1: partners 1,2,3 (cluster X)
    //      (1,1) min(|C∩C|=1, |L∩L|=1)/1 = 1;  (1,2) min(1, |{A}|=1)/1 = 1;  (1,3) min(1, 0)/1 = 0   → 2/3
    //   2: partners 1,2,3
    //      (2,1) min(1,1)/1 = 1;  (2,2) min(1, 2)/1 = 1;  (2,3) min(1, |{B}|=1)/1 = 1               → 1
    //   3: partners 1,2,3 (X) and 4 (Y)
    //      (3,1) min(1,0)/1 = 0;  (3,2) min(1,1)/1 = 1;  (3,3) min(2,1)/2 = 1/2;  (3,4) min(1,1)/1 = 1 → 2.5/4 = 5/8
    //   4: partners 3,4 (Y)
    //      (4,3) min(1,1)/1 = 1;  (4,4) min(1,1)/1 = 1                                               → 1
    //   precision = (2/3 + 1 + 5/8 + 1) / 4 = (16 + 24 + 15 + 24) / 96 = 79/96
    // Recall, over partners sharing a category:
    //   1: partners 1,2 (A): (1,1) min(1,1)/1 = 1;  (1,2) min(1,1)/1 = 1                          → 1
    //   2: partners 1,2 (A) and 3,4 (B)
    //      (2,1) min(1,1)/1 = 1;  (2,2) min(1,2)/2 = 1/2;  (2,3) min(1,1)/1 = 1;  (2,4) min(0,1)/1 = 0 → 2.5/4 = 5/8
    //   3: partners 2,3,4 (B): (3,2) min(1,1)/1 = 1;  (3,3) min(2,1)/1 = 1;  (3,4) min(1,1)/1 = 1   → 1
    //   4: partners 2,3,4 (B): (4,2) min(0,1)/1 = 0;  (4,3) min(1,1)/1 = 1;  (4,4) min(1,1)/1 = 1   → 2/3
    //   recall = (1 + 5/8 + 1 + 2/3) / 4 = (24 + 15 + 24 + 16) / 96 = 79/96
    const s = extendedBcubed(gold, sys);
    expect(s.precision).toBeCloseTo(79 / 96, 12);
    expect(s.recall).toBeCloseTo(79 / 96, 12);
    expect(s.f1).toBeCloseTo(79 / 96, 12);
  });

  it('equals plain B3 when nobody belongs to two groups (Amigó et al. 2009, section 5)', () => {
    const gold = M({ a: ['1'], b: ['2'], c: ['2'], d: ['3'], e: ['3'], f: ['3'] });
    const sys = M({ a: ['x'], b: ['y'], c: ['y'], d: ['y'], e: ['z'], f: ['z'] });
    const plain = b3Score([['a'], ['b', 'c'], ['d', 'e', 'f']], [['a'], ['b', 'c', 'd'], ['e', 'f']]);
    const ext = extendedBcubed(gold, sys);
    expect(ext.precision).toBeCloseTo(plain.precision, 12);
    expect(ext.recall).toBeCloseTo(plain.recall, 12);
  });

  it('scores a perfect overlapping answer 1', () => {
    const gold = M({ a: ['1', '2'], b: ['1'], c: ['2'] });
    expect(extendedBcubed(gold, gold)).toEqual({ recall: 1, precision: 1, f1: 1 });
  });
});

/** The definition item by item, every partner visited: the reference the grouped sums must equal. */
function itemByItem(by: Map<string, Set<string>>, other: Map<string, Set<string>>): number {
  const inter = (a: Set<string>, b: Set<string>) => [...a].filter((x) => b.has(x)).length;
  let total = 0;
  let items = 0;
  for (const [e, groups] of by) {
    if (groups.size === 0) continue;
    const partners = [...by].filter(([, gx]) => inter(groups, gx) > 0);
    total +=
      partners.reduce(
        (sum, [x, gx]) =>
          sum + Math.min(inter(groups, gx), inter(other.get(e) ?? new Set(), other.get(x) ?? new Set())) / inter(groups, gx),
        0,
      ) / partners.length;
    items++;
  }
  return items === 0 ? 0 : total / items;
}

describe('extended BCubed, items with the same memberships counted together', () => {
  it('equals the item-by-item definition on random overlapping clusterings', () => {
    const side = fc.array(fc.tuple(fc.integer({ min: 0, max: 25 }), fc.array(fc.integer({ min: 0, max: 5 }), { maxLength: 3 })), {
      maxLength: 30,
    });
    fc.assert(
      fc.property(side, side, (gold, sys) => {
        const g = new Map(gold.map(([n, es]) => [`m${n}`, new Set(es.map((e) => `G${e}`))]));
        const s = new Map(sys.map(([n, es]) => [`m${n}`, new Set(es.map((e) => `S${e}`))]));
        const got = extendedBcubed(g, s);
        expect(got.precision).toBeCloseTo(itemByItem(s, g), 12);
        expect(got.recall).toBeCloseTo(itemByItem(g, s), 12);
      }),
      { numRuns: 300 },
    );
  });
});
