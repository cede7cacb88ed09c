/**
 * The optional transformer embedder: a sentence-embedding model (ONNX, in the layout
 * @xenova/transformers reads: config.json, tokenizer.json, tokenizer_config.json,
 * onnx/model.onnx) loaded from a local folder, never from a model hub. Sentences are
 * embedded in batches with mean pooling over tokens and L2 normalisation, the usual
 * recipe for sentence-transformers models such as all-MiniLM-L6-v2 (Reimers & Gurevych
 * 2019, "Sentence-BERT").
 */
import { existsSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { StrandError } from '../errors.js';
import type { DenseVector } from '../records.js';
import type { EmbedInput, Embedder } from './embedder.js';

/** Files a model folder must hold. */
export const MODEL_FILES = ['config.json', 'tokenizer.json', 'tokenizer_config.json', join('onnx', 'model.onnx')];

type OrtModule = { InferenceSession: { create: SessionCreate } };
type SessionCreate = (model: unknown, options?: Record<string, unknown>) => Promise<unknown>;
type Extractor = (texts: string[], options: { pooling: 'mean'; normalize: boolean }) => Promise<{ data: Float32Array; dims: number[] }>;

/** Sentence embeddings from a local transformer model. */
export class TransformerEmbedder implements Embedder {
  readonly name = 'transformer';

  private constructor(
    private readonly extract: Extractor,
    private readonly batchSize: number,
  ) {}

  /**
   * Loads the model in `folder`; throws STRAND_MODEL_MISSING naming the folder and the
   * missing files. `threads` > 0 caps the ONNX runtime's threads for this model (one per
   * process when several worker processes share a machine); 0 lets the runtime choose.
   */
  static async load(folder: string, batchSize = 32, threads = 0): Promise<TransformerEmbedder> {
    const dir = resolve(folder);
    const missing = MODEL_FILES.filter((f) => !existsSync(join(dir, f)));
    if (missing.length) {
      throw new StrandError(
        'STRAND_MODEL_MISSING',
        `no usable sentence-embedding model in ${dir}: missing ${missing.join(', ')} (see README, "Transformer embedder")`,
      );
    }
    const { env, pipeline } = await import('@xenova/transformers');
    // Local files only: the library would otherwise try a model hub for anything missing.
    env.allowRemoteModels = false;
    env.allowLocalModels = true;
    env.localModelPath = `${dirname(dir)}/`;
    // The library creates its ONNX session without options; while this model loads, its
    // session is created with the thread cap (the library calls the runtime's
    // InferenceSession.create, looked up at call time).
    const runtime = (await import('onnxruntime-node')) as unknown as { default?: OrtModule } & OrtModule;
    // CommonJS module: its exports are the default export under Node's loader.
    const ort = (runtime.default ?? runtime).InferenceSession;
    const create = ort.create;
    if (threads > 0)
      ort.create = (model, options = {}) => create.call(ort, model, { ...options, intraOpNumThreads: threads, interOpNumThreads: 1 });
    let extract: Extractor;
    try {
      extract = (await pipeline('feature-extraction', basename(dir), { quantized: false })) as unknown as Extractor;
    } catch (err) {
      throw new StrandError('STRAND_MODEL_MISSING', `cannot load the model in ${dir}: ${(err as Error).message}`, { cause: err });
    } finally {
      ort.create = create;
    }
    return new TransformerEmbedder(extract, batchSize);
  }

  async embed(batch: readonly EmbedInput[]): Promise<DenseVector[]> {
    const out: DenseVector[] = [];
    for (let i = 0; i < batch.length; i += this.batchSize) {
      const texts = batch.slice(i, i + this.batchSize).map((b) => b.text);
      const t = await this.extract(texts, { pooling: 'mean', normalize: true });
      const dim = t.dims[t.dims.length - 1]!;
      // Copies, not views: a view would keep the whole batch tensor alive.
      for (let k = 0; k < texts.length; k++) out.push({ kind: 'dense', values: t.data.slice(k * dim, (k + 1) * dim) });
    }
    return out;
  }
}
