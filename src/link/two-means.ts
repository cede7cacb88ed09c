/**
 * Dividing a cluster in two, for consolidation's splits of events (their mentions) and of
 * stories (their articles): two-means on cosine similarity with the time decay the linkers
 * use, seeded by the member that fits the whole least and then the one least like it, and
 * how alike the two parts end up (their centroids' cosine x the decay of the gap between
 * their times). The result depends only on the members and their order.
 */
import type { Vector } from '../records.js';
import { centroidCosine, type Centroid } from './event-state.js';
import { cosine } from './score-candidate.js';

/** One member: its vector, the days it places the cluster in, and its weight in a centroid. */
export interface DivisionMember {
  vector: Vector;
  /** Its own day span [first, last] (day numbers). */
  span: [number, number];
  /** The span its stated times give, or null: a part's time comes from these when any has one. */
  explicit: [number, number] | null;
  weight: number;
}

/** What the division needs of a part (and of the whole): its centroid and time span. */
export type Part = Pick<Centroid, 'sparse' | 'dense' | 'norm'> & { timeStart: number; timeEnd: number };

/** Two parts: each member's side (0 or 1), the parts, and how alike they are. */
export interface Division {
  side: number[];
  parts: [Part, Part];
  score: number;
}

const MAX_ROUNDS = 10;

/** Divides `members` in two, or null when they do not divide (one side empty). */
export function divideInTwo(members: readonly DivisionMember[], whole: Part, halfLifeDays: number): Division | null {
  const fit = (i: number, p: Part): number => {
    const [ms, me] = members[i]!.span;
    const gap = Math.max(0, p.timeStart - me, ms - p.timeEnd);
    return cosine(members[i]!.vector, p) * Math.pow(0.5, gap / halfLifeDays);
  };
  const partOf = (indices: readonly number[]): Part => part(members, indices);
  const all = members.map((_, i) => i);
  const seedA = argMin(all, (i) => fit(i, whole));
  const a0 = partOf([seedA]);
  const seedB = argMin(all, (i) => (i === seedA ? Infinity : fit(i, a0)));
  if (seedB === seedA) return null;
  let side = all.map((i) => (i === seedB ? 1 : 0));
  let parts: [Part, Part] = [a0, partOf([seedB])];
  for (let round = 0; round < MAX_ROUNDS; round++) {
    const next = all.map((i) => (fit(i, parts[1]) > fit(i, parts[0]) ? 1 : 0));
    const changed = next.some((x, i) => x !== side[i]);
    side = next;
    const [i0, i1] = [all.filter((i) => side[i] === 0), all.filter((i) => side[i] === 1)];
    if (i0.length === 0 || i1.length === 0) return null;
    parts = [partOf(i0), partOf(i1)];
    if (!changed) break;
  }
  const [a, b] = parts;
  const gap = Math.max(0, b.timeStart - a.timeEnd, a.timeStart - b.timeEnd);
  return { side, parts, score: centroidCosine(a, b) * Math.pow(0.5, gap / halfLifeDays) };
}

/** The members on each side. */
export function divide<T>(members: readonly T[], side: readonly number[]): [T[], T[]] {
  return [members.filter((_, i) => side[i] === 0), members.filter((_, i) => side[i] === 1)];
}

function part(members: readonly DivisionMember[], indices: readonly number[]): Part {
  const p: Part = { sparse: new Map(), dense: null, norm: 0, timeStart: Infinity, timeEnd: -Infinity };
  let sq = 0;
  for (const i of indices) {
    const { vector: v, weight: w, explicit: span } = members[i]!;
    if (v.kind === 'dense') {
      p.dense ??= new Float64Array(v.values.length);
      for (let k = 0; k < v.values.length; k++) p.dense[k]! += w * v.values[k]!;
    } else {
      for (let k = 0; k < v.indices.length; k++) p.sparse.set(v.indices[k]!, (p.sparse.get(v.indices[k]!) ?? 0) + w * v.values[k]!);
    }
    if (span) {
      p.timeStart = Math.min(p.timeStart, span[0]);
      p.timeEnd = Math.max(p.timeEnd, span[1]);
    }
  }
  // As in an event: stated times make the span; without any, the first member's days.
  if (p.timeStart === Infinity) [p.timeStart, p.timeEnd] = members[indices[0]!]!.span;
  if (p.dense) for (const x of p.dense) sq += x * x;
  for (const x of p.sparse.values()) sq += x * x;
  p.norm = Math.sqrt(sq);
  return p;
}

/** The element of `xs` with the least f (the first on a tie). */
function argMin(xs: readonly number[], f: (x: number) => number): number {
  let best = xs[0]!;
  let bestValue = Infinity;
  for (const x of xs) {
    const v = f(x);
    if (v < bestValue) {
      bestValue = v;
      best = x;
    }
  }
  return best;
}
