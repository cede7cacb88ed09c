/**
 * Dividing a cluster in two, for consolidation's splits of events (their mentions) and of
 * stories (their articles): two-means on cosine similarity with the time decay the linkers
 * use, seeded by the member that fits the whole least and then the one least like it, and
 * how alike the two parts end up (their centroids' cosine x the decay of the gap between
 * their times). The result depends only on the members and their order.
 */
import type { Vector } from '../records.js';
import type { Centroid } from './event-state.js';
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

/** What the division needs of the whole: its centroid and time span. */
export type Part = Pick<Centroid, 'sparse' | 'dense' | 'norm'> & { timeStart: number; timeEnd: number };

/** Each member's side (0 or 1), and how alike the two parts are. */
export interface Division {
  side: number[];
  score: number;
}

const MAX_ROUNDS = 10;

/** Divides `members` in two, or null when they do not divide (one side empty). */
export function divideInTwo(members: readonly DivisionMember[], whole: Part, halfLifeDays: number): Division | null {
  const space = new LocalTerms(members);
  const decayed = (i: number, similarity: number, p: { timeStart: number; timeEnd: number }): number => {
    const [ms, me] = members[i]!.span;
    const gap = Math.max(0, p.timeStart - me, ms - p.timeEnd);
    return similarity * Math.pow(0.5, gap / halfLifeDays);
  };
  const fit = (i: number, p: LocalPart): number => decayed(i, space.cosine(i, p), p);
  const partOf = (indices: readonly number[]): LocalPart => space.part(indices);
  const all = members.map((_, i) => i);
  const seedA = argMin(all, (i) => decayed(i, cosine(members[i]!.vector, whole), whole));
  const a0 = partOf([seedA]);
  const seedB = argMin(all, (i) => (i === seedA ? Infinity : fit(i, a0)));
  if (seedB === seedA) return null;
  let side = all.map((i) => (i === seedB ? 1 : 0));
  let parts: [LocalPart, LocalPart] = [a0, partOf([seedB])];
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
  return { side, score: space.partCosine(a, b) * Math.pow(0.5, gap / halfLifeDays) };
}

/** The members on each side. */
export function divide<T>(members: readonly T[], side: readonly number[]): [T[], T[]] {
  return [members.filter((_, i) => side[i] === 0), members.filter((_, i) => side[i] === 1)];
}

/**
 * A part's centroid over the members' own terms: sparse weights in an array indexed by a
 * term's local number, with the terms in the order they were first added (the order a Map
 * of the weights would iterate in, so sums come out exactly as with one).
 */
interface LocalPart {
  weights: Float64Array;
  terms: number[];
  dense: Float64Array | null;
  norm: number;
  timeStart: number;
  timeEnd: number;
}

/**
 * The terms of the members numbered 0..n-1. Two-means compares every member with both
 * parts in every round: with weights in arrays instead of Maps keyed by hashed feature,
 * an event split examination (most find no split) costs several times less.
 */
class LocalTerms {
  /** Each sparse member's terms as local numbers (null for a dense member). */
  private readonly local: (Int32Array | null)[];
  private readonly size: number;

  constructor(private readonly members: readonly DivisionMember[]) {
    const numbers = new Map<number, number>();
    this.local = members.map(({ vector: v }) => {
      if (v.kind === 'dense') return null;
      const out = new Int32Array(v.indices.length);
      for (let k = 0; k < v.indices.length; k++) {
        let n = numbers.get(v.indices[k]!);
        if (n === undefined) numbers.set(v.indices[k]!, (n = numbers.size));
        out[k] = n;
      }
      return out;
    });
    this.size = numbers.size;
  }

  part(indices: readonly number[]): LocalPart {
    const p: LocalPart = {
      weights: new Float64Array(this.size),
      terms: [],
      dense: null,
      norm: 0,
      timeStart: Infinity,
      timeEnd: -Infinity,
    };
    const seen = new Uint8Array(this.size);
    for (const i of indices) {
      const { vector: v, weight: w, explicit: span } = this.members[i]!;
      const local = this.local[i];
      if (v.kind === 'dense') {
        p.dense ??= new Float64Array(v.values.length);
        for (let k = 0; k < v.values.length; k++) p.dense[k]! += w * v.values[k]!;
      } else if (local) {
        for (let k = 0; k < local.length; k++) {
          const t = local[k]!;
          if (!seen[t]) {
            seen[t] = 1;
            p.terms.push(t);
          }
          p.weights[t]! += w * v.values[k]!;
        }
      }
      if (span) {
        p.timeStart = Math.min(p.timeStart, span[0]);
        p.timeEnd = Math.max(p.timeEnd, span[1]);
      }
    }
    // As in an event: stated times make the span; without any, the first member's days.
    if (p.timeStart === Infinity) [p.timeStart, p.timeEnd] = this.members[indices[0]!]!.span;
    let sq = 0;
    if (p.dense) for (const x of p.dense) sq += x * x;
    for (const t of p.terms) sq += p.weights[t]! * p.weights[t]!;
    p.norm = Math.sqrt(sq);
    return p;
  }

  /** Cosine between member `i` and a part (as score-candidate's cosine against an event). */
  cosine(i: number, p: LocalPart): number {
    if (p.norm === 0) return 0;
    const v = this.members[i]!.vector;
    const local = this.local[i];
    let dot = 0;
    if (local) {
      for (let k = 0; k < local.length; k++) dot += p.weights[local[k]!]! * v.values[k]!;
    } else if (p.dense) {
      for (let k = 0; k < v.values.length; k++) dot += v.values[k]! * p.dense[k]!;
    }
    return dot / p.norm;
  }

  /** Cosine between two parts (as event-state's centroidCosine). */
  partCosine(a: LocalPart, b: LocalPart): number {
    if (a.norm === 0 || b.norm === 0) return 0;
    let dot = 0;
    if (a.dense && b.dense) {
      for (let k = 0; k < a.dense.length; k++) dot += a.dense[k]! * b.dense[k]!;
    } else {
      const [small, large] = a.terms.length <= b.terms.length ? [a, b] : [b, a];
      for (const t of small.terms) dot += small.weights[t]! * large.weights[t]!;
    }
    return dot / (a.norm * b.norm);
  }
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
