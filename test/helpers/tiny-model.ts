/** A tiny but valid sentence-embedding model folder for tests (see src/bench/build-onnx-model.ts). */
import { writeModel } from '../../src/bench/build-onnx-model.js';

/** The vocabulary: special tokens first, as BERT tokenizers order them. */
export const TINY_VOCAB = [
  '[PAD]',
  '[UNK]',
  '[CLS]',
  '[SEP]',
  'the',
  'levee',
  'failed',
  'bridge',
  'fell',
  'fire',
  'burned',
  'warehouse',
  'police',
  'arrested',
  'a',
  'man',
  '##s',
  'in',
  'on',
  'monday',
  '.',
  ',',
];

/** Writes a plain-lookup model (last_hidden_state = embedding rows); returns the table. */
export function writeTinyModel(dir: string, hidden = 8): number[][] {
  // A deterministic table from a fixed formula, no randomness.
  return writeModel(dir, { vocab: TINY_VOCAB, hidden, blocks: 0, weight: (_t, id, j) => Math.sin(1 + id * 7 + j * 3) });
}
