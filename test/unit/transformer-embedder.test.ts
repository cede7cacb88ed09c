import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { TransformerEmbedder } from '../../src/embed/transformer-embedder.js';
import { isStrandError } from '../../src/errors.js';
import { TINY_VOCAB, writeTinyModel } from '../helpers/tiny-model.js';

describe('the transformer embedder on a tiny model built here', () => {
  const dir = join(mkdtempSync(join(tmpdir(), 'strandline-model-')), 'tiny-bert');
  let table: number[][];
  let embedder: TransformerEmbedder;
  beforeAll(async () => {
    table = writeTinyModel(dir);
    embedder = await TransformerEmbedder.load(dir, 2);
  });

  it('mean-pools the token vectors of [CLS] sentence [SEP] and normalises them', async () => {
    const [v] = await embedder.embed([{ text: 'The levee failed.', terms: [] }]);
    // WordPiece with this vocabulary: [CLS] the levee failed . [SEP] (lower-cased).
    const ids = ['[CLS]', 'the', 'levee', 'failed', '.', '[SEP]'].map((t) => TINY_VOCAB.indexOf(t));
    const mean = table[0]!.map((_, j) => ids.reduce((s, id) => s + table[id]![j]!, 0) / ids.length);
    const norm = Math.hypot(...mean);
    expect(v!.kind).toBe('dense');
    expect([...v!.values].map((x) => Number(x.toFixed(5)))).toEqual(mean.map((x) => Number((x / norm).toFixed(5))));
  });

  it('splits unknown words into word pieces or [UNK] and embeds batches in order', async () => {
    const vs = await embedder.embed([
      { text: 'Police arrested a man', terms: [] },
      { text: 'The bridge fell', terms: [] },
      { text: 'Zzyzx', terms: [] },
    ]);
    expect(vs).toHaveLength(3);
    for (const v of vs) expect(Math.hypot(...v.values)).toBeCloseTo(1, 5);
    const again = await embedder.embed([{ text: 'The bridge fell', terms: [] }]);
    expect([...again[0]!.values]).toEqual([...vs[1]!.values]);
  });

  it('caps the ONNX runtime threads when asked, for that model only', async () => {
    const ort = (await import('onnxruntime-node')).InferenceSession;
    const spy = vi.spyOn(ort, 'create');
    try {
      const capped = await TransformerEmbedder.load(dir, 2, 1);
      expect(spy.mock.calls.at(-1)![1]).toMatchObject({ intraOpNumThreads: 1, interOpNumThreads: 1 });
      expect((await capped.embed([{ text: 'The levee failed.', terms: [] }]))[0]!.values).toEqual(
        (await embedder.embed([{ text: 'The levee failed.', terms: [] }]))[0]!.values,
      );
      await TransformerEmbedder.load(dir, 2);
      expect(spy.mock.calls.at(-1)![1]).not.toHaveProperty('intraOpNumThreads');
    } finally {
      spy.mockRestore();
    }
  });

  it('refuses a folder without a model, naming the folder and what is missing', async () => {
    const empty = mkdtempSync(join(tmpdir(), 'strandline-nomodel-'));
    let err: unknown;
    try {
      await TransformerEmbedder.load(empty);
    } catch (e) {
      err = e;
    }
    expect(isStrandError(err, 'STRAND_MODEL_MISSING')).toBe(true);
    expect((err as Error).message).toContain(empty);
    expect((err as Error).message).toMatch(/onnx\/model\.onnx/);
  });
});
