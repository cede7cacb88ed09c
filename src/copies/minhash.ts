/**
 * MinHash sketches of article text (Broder 1997, "On the resemblance and containment of
 * documents"): the text becomes the set of its 4-word shingles (the typical value in
 * Manning, Raghavan & Schütze, Introduction to Information Retrieval, ch. 19), each shingle
 * a 32-bit hash; the sketch keeps, for each of K hash functions, the least hash over the
 * set. The share of equal positions in two sketches estimates the Jaccard similarity of the
 * two sets, with a standard error of about sqrt(J(1 - J) / K).
 */
import { fnv1a } from '../embed/tfidf-embedder.js';

/** Hash functions per sketch. */
export const SKETCH_SIZE = 128;
/** Words per shingle. */
export const SHINGLE_WORDS = 4;

/**
 * The distinct shingle hashes of a text: lower-cased words, punctuation dropped. Each word
 * is hashed once (FNV-1a) and a shingle's hash mixes its words' hashes in order, so no
 * shingle string is ever built.
 */
export function shingles(text: string, words = SHINGLE_WORDS): Set<number> {
  const tokens =
    text
      .toLowerCase()
      .normalize('NFKC')
      .match(/[\p{L}\p{N}]+(?:['’][\p{L}]+)?/gu) ?? [];
  const out = new Set<number>();
  if (tokens.length === 0) return out;
  const h = tokens.map(fnv1a);
  const n = Math.min(words, h.length);
  for (let i = 0; i + n <= h.length; i++) {
    let x = 0x811c9dc5;
    for (let k = 0; k < n; k++) x = fmix32((x ^ h[i + k]!) + k);
    out.add(x);
  }
  return out;
}

/**
 * The K hash functions: h_i(x) = (a_i x + b_i) mod 2^32 with odd a_i (multiply-add
 * universal hashing, common practice for MinHash over already-mixed keys), coefficients
 * fixed so that sketches made anywhere, at any time, agree.
 */
const [MUL, ADD] = ((): [Uint32Array, Uint32Array] => {
  const mul = new Uint32Array(SKETCH_SIZE);
  const add = new Uint32Array(SKETCH_SIZE);
  let x = 0x9e3779b9;
  for (let i = 0; i < SKETCH_SIZE; i++) {
    x = fmix32(x + 0x6d2b79f5);
    mul[i] = x | 1;
    x = fmix32(x + 0x6d2b79f5);
    add[i] = x;
  }
  return [mul, add];
})();

/** The MinHash sketch of a shingle set (all 0xffffffff for an empty set). */
export function sketch(set: ReadonlySet<number>): Uint32Array {
  const out = new Uint32Array(SKETCH_SIZE);
  const xs = Uint32Array.from(set);
  for (let i = 0; i < SKETCH_SIZE; i++) {
    const a = MUL[i]!;
    const b = ADD[i]!;
    let min = 0xffffffff;
    for (let k = 0; k < xs.length; k++) {
      const h = (Math.imul(a, xs[k]!) + b) >>> 0;
      if (h < min) min = h;
    }
    out[i] = min;
  }
  return out;
}

/** The Jaccard similarity two sketches estimate: the share of positions where they agree. */
export function estimateJaccard(a: Uint32Array, b: Uint32Array): number {
  let same = 0;
  for (let i = 0; i < a.length; i++) if (a[i] === b[i]) same++;
  return same / a.length;
}

/** The exact Jaccard similarity of two sets (for checking the estimate). */
export function exactJaccard(a: ReadonlySet<number>, b: ReadonlySet<number>): number {
  if (a.size === 0 && b.size === 0) return 1;
  let both = 0;
  for (const x of a) if (b.has(x)) both++;
  return both / (a.size + b.size - both);
}

/** MurmurHash3's 32-bit finaliser (Appleby; common practice as an integer mixer). */
export function fmix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}
