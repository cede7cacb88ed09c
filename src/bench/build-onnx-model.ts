/**
 * Writes sentence-embedding model folders in the layout @xenova/transformers reads
 * (config.json, tokenizer.json, tokenizer_config.json, onnx/model.onnx), for tests and
 * benchmarks that must run offline: a BERT WordPiece tokenizer over a given vocabulary and
 * an ONNX graph (built with onnx-proto) that looks tokens up in an embedding table and,
 * optionally, passes them through residual feed-forward blocks. Weights are generated, not
 * trained: the outputs mean nothing, the cost and the loading path are real.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import onnxProto from 'onnx-proto';

// onnx-proto is CommonJS; Node's ESM loader sees only its default export.
const { onnx } = onnxProto;

/** Shape of the model to write. */
export interface ModelSpec {
  /** Tokens, special tokens first: [PAD], [UNK], [CLS], [SEP]. */
  vocab: readonly string[];
  hidden: number;
  /** Residual feed-forward blocks (hidden → 4 x hidden → hidden, ReLU); 0 for a plain lookup. */
  blocks: number;
  /** Weight for row `row`, column `col` of tensor `tensor`; deterministic. */
  weight?: (tensor: number, row: number, col: number) => number;
}

/** Special tokens, in BERT's order. */
export const SPECIAL_TOKENS = ['[PAD]', '[UNK]', '[CLS]', '[SEP]'] as const;

const defaultWeight = (t: number, r: number, c: number): number => Math.sin(1 + t * 13 + r * 7 + c * 3) * (t === 0 ? 1 : 0.05);

/** Writes the model folder; returns the embedding table (row per token id). */
export function writeModel(dir: string, spec: ModelSpec): number[][] {
  const w = spec.weight ?? defaultWeight;
  const h = spec.hidden;
  mkdirSync(join(dir, 'onnx'), { recursive: true });
  const table = spec.vocab.map((_, id) => Array.from({ length: h }, (_, j) => w(0, id, j) + (id === j ? 1 : 0)));
  const F = onnx.TensorProto.DataType.FLOAT;
  const initializer: onnxProto.onnx.ITensorProto[] = [
    { name: 'embeddings', dims: [spec.vocab.length, h], dataType: F, floatData: table.flat() },
  ];
  const node: onnxProto.onnx.INodeProto[] = [
    {
      opType: 'Gather',
      input: ['embeddings', 'input_ids'],
      output: ['h0'],
      name: 'lookup',
      attribute: [{ name: 'axis', type: onnx.AttributeProto.AttributeType.INT, i: 0 }],
    },
  ];
  for (let b = 0; b < spec.blocks; b++) {
    const matrix = (name: string, rows: number, cols: number, t: number) =>
      initializer.push({
        name,
        dims: [rows, cols],
        dataType: F,
        floatData: Array.from({ length: rows * cols }, (_, k) => w(t, Math.floor(k / cols), k % cols)),
      });
    matrix(`w${b}a`, h, 4 * h, 2 * b + 1);
    matrix(`w${b}b`, 4 * h, h, 2 * b + 2);
    node.push(
      { opType: 'MatMul', input: [`h${b}`, `w${b}a`], output: [`u${b}`], name: `up${b}` },
      { opType: 'Relu', input: [`u${b}`], output: [`r${b}`], name: `relu${b}` },
      { opType: 'MatMul', input: [`r${b}`, `w${b}b`], output: [`d${b}`], name: `down${b}` },
      { opType: 'Add', input: [`h${b}`, `d${b}`], output: [`h${b + 1}`], name: `residual${b}` },
    );
  }
  node.push({ opType: 'Identity', input: [`h${spec.blocks}`], output: ['last_hidden_state'], name: 'out' });
  const tensor = (name: string, elemType: number, dims: (string | number)[]) => ({
    name,
    type: { tensorType: { elemType, shape: { dim: dims.map((d) => (typeof d === 'string' ? { dimParam: d } : { dimValue: d })) } } },
  });
  const model = onnx.ModelProto.create({
    irVersion: 7,
    producerName: 'strandline',
    opsetImport: [{ domain: '', version: 13 }],
    graph: {
      name: 'sentence-embedder',
      node,
      initializer,
      input: [
        tensor('input_ids', onnx.TensorProto.DataType.INT64, ['batch', 'sequence']),
        tensor('attention_mask', onnx.TensorProto.DataType.INT64, ['batch', 'sequence']),
      ],
      output: [tensor('last_hidden_state', F, ['batch', 'sequence', h])],
    },
  });
  writeFileSync(join(dir, 'onnx', 'model.onnx'), onnx.ModelProto.encode(model).finish());
  writeFileSync(
    join(dir, 'config.json'),
    JSON.stringify({
      model_type: 'bert',
      architectures: ['BertModel'],
      hidden_size: h,
      vocab_size: spec.vocab.length,
      max_position_embeddings: 512,
    }),
  );
  writeFileSync(
    join(dir, 'tokenizer_config.json'),
    JSON.stringify({
      tokenizer_class: 'BertTokenizer',
      do_lower_case: true,
      model_max_length: 512,
      cls_token: '[CLS]',
      sep_token: '[SEP]',
      pad_token: '[PAD]',
      unk_token: '[UNK]',
    }),
  );
  const special = (content: string, id: number) => ({
    id,
    content,
    single_word: false,
    lstrip: false,
    rstrip: false,
    normalized: false,
    special: true,
  });
  writeFileSync(
    join(dir, 'tokenizer.json'),
    JSON.stringify({
      version: '1.0',
      truncation: null,
      padding: null,
      added_tokens: SPECIAL_TOKENS.map((t, i) => special(t, i)),
      normalizer: { type: 'BertNormalizer', clean_text: true, handle_chinese_chars: true, strip_accents: null, lowercase: true },
      pre_tokenizer: { type: 'BertPreTokenizer' },
      post_processor: {
        type: 'TemplateProcessing',
        single: [
          { SpecialToken: { id: '[CLS]', type_id: 0 } },
          { Sequence: { id: 'A', type_id: 0 } },
          { SpecialToken: { id: '[SEP]', type_id: 0 } },
        ],
        pair: [
          { SpecialToken: { id: '[CLS]', type_id: 0 } },
          { Sequence: { id: 'A', type_id: 0 } },
          { SpecialToken: { id: '[SEP]', type_id: 0 } },
          { Sequence: { id: 'B', type_id: 1 } },
          { SpecialToken: { id: '[SEP]', type_id: 1 } },
        ],
        special_tokens: { '[CLS]': { id: '[CLS]', ids: [2], tokens: ['[CLS]'] }, '[SEP]': { id: '[SEP]', ids: [3], tokens: ['[SEP]'] } },
      },
      decoder: { type: 'WordPiece', prefix: '##', cleanup: true },
      model: {
        type: 'WordPiece',
        unk_token: '[UNK]',
        continuing_subword_prefix: '##',
        max_input_chars_per_word: 100,
        vocab: Object.fromEntries(spec.vocab.map((t, i) => [t, i])),
      },
    }),
  );
  return table;
}
