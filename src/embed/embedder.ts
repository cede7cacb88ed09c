/** The Embedder contract every vector model implements. */
import type { Vector } from '../records.js';

/** What an embedder reads for one sentence. */
export interface EmbedInput {
  text: string;
  /** Normalised content terms from the text stage. */
  terms: readonly string[];
}

/** What a model learned from the stream, as the store keeps it (TF-IDF: document frequencies). */
export interface LearnedState {
  docs: number;
  /** [feature, df] pairs. */
  df: Iterable<readonly [number, number]>;
}

/** What a model learned since it was last asked: committed with the article it came from. */
export interface LearnedDelta {
  docs: number;
  df: Map<number, number>;
}

/**
 * Turns sentences into L2-normalised vectors. A model that learns from the stream (TF-IDF)
 * implements the optional members; the pipeline calls them where present and never asks
 * which model it holds.
 */
export interface Embedder {
  /** Short name for logs and the API. */
  readonly name: string;
  /** Lets a model that learns from the stream (TF-IDF's document frequencies) see every sentence. */
  learn?(batch: readonly EmbedInput[]): void;
  /** Vectors for a batch, in order. */
  embed(batch: readonly EmbedInput[]): Promise<Vector[]>;
  /**
   * A whole article's vector from all its terms (story evidence), when the model can make
   * one cheaply; otherwise stories use the mean of the article's mention vectors.
   */
  documentVector?(terms: readonly string[]): Vector;
  /** Replaces what was learned in memory with the store's snapshot. */
  load?(state: LearnedState): void;
  /** Returns and clears what learn() added since the last call. */
  takeLearned?(): LearnedDelta;
  /** One term list's vector as the model stands now, synchronously (a model cheap per sentence). */
  vectorNow?(terms: readonly string[]): Vector;
}
