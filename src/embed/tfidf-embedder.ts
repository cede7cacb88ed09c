/**
 * The offline default embedder: sparse TF-IDF over hashed word unigrams (and, if asked,
 * adjacent bigrams), with document frequencies learned incrementally from the stream
 * (every sentence is a document). Hashing (Weinberger et al. 2009, "Feature hashing for
 * large scale multitask learning") keeps the vocabulary bounded without a dictionary.
 *
 *   tf  = 1 + ln(count)                          (sublinear tf; Manning et al., IIR 6.4.1)
 *   idf = (ln((1 + N) / (1 + df)) + 1) ^ p       (smoothed idf, as scikit-learn's default,
 *                                                 raised to idfPower: p > 1 weighs rare,
 *                                                 specific words more against topical ones)
 */
import type { SparseVector } from '../records.js';
import type { EmbedInput, Embedder, LearnedDelta, LearnedState } from './embedder.js';

/** Document-frequency state, for persistence. */
export type IdfState = LearnedState;

/** Changes to the document frequencies since the last call to takeLearned(). */
export type IdfDelta = LearnedDelta;

/** FNV-1a 32-bit over UTF-16 code units (Fowler, Noll, Vo; common practice for feature hashing). */
export function fnv1a(s: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < s.length; i++) {
    h ^= s.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}

/** Sparse TF-IDF embedder with hashed features. */
export class TfidfEmbedder implements Embedder {
  readonly name = 'tfidf';
  private readonly mask: number;
  private readonly df: Uint32Array;
  private docs = 0;
  private delta: IdfDelta = { docs: 0, df: new Map() };
  // Scratch space reused across sentences: the hot path allocates only its output.
  private scratch = new Uint32Array(256);
  private readonly bigrams: boolean;
  private readonly idfPower: number;

  /** `bigrams` (default false) adds hashed adjacent-word pairs; `idfPower` (default 1) sharpens idf. */
  constructor(hashBits: number, o: { bigrams?: boolean; idfPower?: number } = {}) {
    this.mask = (1 << hashBits) - 1;
    this.df = new Uint32Array(1 << hashBits);
    this.bigrams = o.bigrams ?? false;
    this.idfPower = o.idfPower ?? 1;
  }

  /** Restores persisted document frequencies, replacing what was learned in memory. */
  load(state: IdfState): void {
    this.df.fill(0);
    this.delta = { docs: 0, df: new Map() };
    this.docs = state.docs;
    for (const [f, n] of state.df) this.df[f & this.mask] = n;
  }

  /** Counts each sentence once per feature it contains. */
  learn(batch: readonly EmbedInput[]): void {
    for (const item of batch) {
      const n = this.features(item.terms);
      const sorted = this.scratch.subarray(0, n).sort();
      for (let i = 0; i < n; i++) {
        const f = sorted[i]!;
        if (i > 0 && f === sorted[i - 1]) continue;
        this.df[f]!++;
        this.delta.df.set(f, (this.delta.df.get(f) ?? 0) + 1);
      }
      this.docs++;
      this.delta.docs++;
    }
  }

  /** Returns and clears the document-frequency changes since the last call. */
  takeLearned(): IdfDelta {
    const d = this.delta;
    this.delta = { docs: 0, df: new Map() };
    return d;
  }

  /** Inverse document frequency of a hashed feature. */
  idf(feature: number): number {
    const idf = Math.log((1 + this.docs) / (1 + this.df[feature & this.mask]!)) + 1;
    return this.idfPower === 1 ? idf : idf ** this.idfPower;
  }

  async embed(batch: readonly EmbedInput[]): Promise<SparseVector[]> {
    return batch.map((item) => this.vector(item.terms));
  }

  /** A whole article's TF-IDF vector (its terms pooled, as one document). */
  documentVector(terms: readonly string[]): SparseVector {
    return this.vector(terms);
  }

  /** The TF-IDF vector of one term list as the frequencies stand now. */
  vectorNow(terms: readonly string[]): SparseVector {
    return this.vector(terms);
  }

  /** The TF-IDF vector of one term list (synchronous, for callers that need no batching). */
  vector(terms: readonly string[]): SparseVector {
    const n = this.features(terms);
    const sorted = this.scratch.subarray(0, n).sort();
    let distinct = 0;
    for (let i = 0; i < n; i++) if (i === 0 || sorted[i] !== sorted[i - 1]) distinct++;
    const indices = new Uint32Array(distinct);
    const values = new Float32Array(distinct);
    let k = -1;
    let norm = 0;
    for (let i = 0; i < n; i++) {
      if (i === 0 || sorted[i] !== sorted[i - 1]) {
        k++;
        indices[k] = sorted[i]!;
        values[k] = 0;
      }
      values[k]!++;
    }
    for (let j = 0; j < distinct; j++) {
      const w = (1 + Math.log(values[j]!)) * this.idf(indices[j]!);
      values[j] = w;
      norm += w * w;
    }
    norm = Math.sqrt(norm);
    if (norm > 0) for (let j = 0; j < distinct; j++) values[j]! /= norm;
    return { kind: 'sparse', indices, values };
  }

  /** Hashes unigrams (and adjacent bigrams when asked) into the scratch buffer; returns how many. */
  private features(terms: readonly string[]): number {
    const need = terms.length * 2;
    if (this.scratch.length < need) this.scratch = new Uint32Array(need * 2);
    let n = 0;
    for (let i = 0; i < terms.length; i++) {
      this.scratch[n++] = fnv1a(terms[i]!) & this.mask;
      if (this.bigrams && i > 0) this.scratch[n++] = fnv1a(`${terms[i - 1]!}\u0001${terms[i]!}`) & this.mask;
    }
    return n;
  }
}
