import { describe, expect, it } from 'vitest';
import { centroidCosine } from '../../src/link/event-state.js';
import { cosine } from '../../src/link/score-candidate.js';
import { type DivisionMember, type Part, divideInTwo } from '../../src/link/two-means.js';
import type { SparseVector } from '../../src/records.js';
import { seededRandom } from '../../src/seeded-random.js';

/**
 * Two-means written plainly over Maps keyed by feature, as the linker's own centroids are:
 * the division over local term arrays must give exactly the same sides and score.
 */
function reference(members: readonly DivisionMember[], whole: Part, halfLifeDays: number): { side: number[]; score: number } | null {
  const part = (indices: readonly number[]): Part => {
    const p: Part = { sparse: new Map(), dense: null, norm: 0, timeStart: Infinity, timeEnd: -Infinity };
    for (const i of indices) {
      const { vector: v, weight: w, explicit } = members[i]!;
      if (v.kind === 'sparse')
        for (let k = 0; k < v.indices.length; k++) p.sparse.set(v.indices[k]!, (p.sparse.get(v.indices[k]!) ?? 0) + w * v.values[k]!);
      if (explicit) [p.timeStart, p.timeEnd] = [Math.min(p.timeStart, explicit[0]), Math.max(p.timeEnd, explicit[1])];
    }
    if (p.timeStart === Infinity) [p.timeStart, p.timeEnd] = members[indices[0]!]!.span;
    let sq = 0;
    for (const x of p.sparse.values()) sq += x * x;
    p.norm = Math.sqrt(sq);
    return p;
  };
  const fit = (i: number, p: Part): number => {
    const [ms, me] = members[i]!.span;
    return cosine(members[i]!.vector, p) * Math.pow(0.5, Math.max(0, p.timeStart - me, ms - p.timeEnd) / halfLifeDays);
  };
  const all = members.map((_, i) => i);
  const argMin = (f: (i: number) => number): number => all.reduce((best, i) => (f(i) < f(best) ? i : best), 0);
  const seedA = argMin((i) => fit(i, whole));
  const a0 = part([seedA]);
  const seedB = argMin((i) => (i === seedA ? Infinity : fit(i, a0)));
  if (seedB === seedA) return null;
  let side = all.map((i) => (i === seedB ? 1 : 0));
  let parts = [a0, part([seedB])] as [Part, Part];
  for (let round = 0; round < 10; round++) {
    const next = all.map((i) => (fit(i, parts[1]) > fit(i, parts[0]) ? 1 : 0));
    const changed = next.some((x, i) => x !== side[i]);
    side = next;
    const sides = [all.filter((i) => side[i] === 0), all.filter((i) => side[i] === 1)];
    if (sides[0]!.length === 0 || sides[1]!.length === 0) return null;
    parts = [part(sides[0]!), part(sides[1]!)];
    if (!changed) break;
  }
  const [a, b] = parts;
  return {
    side,
    score: centroidCosine(a, b) * Math.pow(0.5, Math.max(0, b.timeStart - a.timeEnd, a.timeStart - b.timeEnd) / halfLifeDays),
  };
}

function randomMembers(random: () => number): DivisionMember[] {
  const n = 2 + Math.floor(random() * 30);
  // Two vocabularies that overlap a little, so that some groups divide and some do not.
  return Array.from({ length: n }, () => {
    const base = random() < 0.5 ? 0 : 40;
    const terms = new Set(Array.from({ length: 3 + Math.floor(random() * 8) }, () => base + Math.floor(random() * 60)));
    const indices = Uint32Array.from(terms);
    const vector: SparseVector = { kind: 'sparse', indices, values: Float32Array.from(indices, () => random()) };
    const day = Math.floor(random() * 40);
    return {
      vector,
      span: [day, day],
      explicit: random() < 0.5 ? [day, day + Math.floor(random() * 3)] : null,
      weight: random() < 0.8 ? 1 : 0.5,
    };
  });
}

describe('divideInTwo', () => {
  it('gives exactly the sides and score of two-means over Maps, on 500 random groups', () => {
    const random = seededRandom(7);
    let divided = 0;
    for (let run = 0; run < 500; run++) {
      const members = randomMembers(random);
      const sparse = new Map<number, number>();
      for (const m of members)
        if (m.vector.kind === 'sparse') m.vector.indices.forEach((f, k) => sparse.set(f, (sparse.get(f) ?? 0) + m.vector.values[k]!));
      let sq = 0;
      for (const x of sparse.values()) sq += x * x;
      const whole: Part = { sparse, dense: null, norm: Math.sqrt(sq), timeStart: 0, timeEnd: 40 };
      const got = divideInTwo(members, whole, 7);
      expect(got).toEqual(reference(members, whole, 7));
      if (got) divided++;
    }
    expect(divided).toBeGreaterThan(100);
  });
});
