/** The Embedder contract every vector model implements. */
import type { Vector } from '../records.js';

/** What an embedder reads for one sentence. */
export interface EmbedInput {
  text: string;
  /** Normalised content terms from the text stage. */
  terms: readonly string[];
}

/** Turns sentences into L2-normalised vectors. */
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
}
