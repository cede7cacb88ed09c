/**
 * Builds a tiny but valid sentence-embedding model folder in the layout
 * @xenova/transformers reads, so tests exercise the real loading code offline: a BERT
 * WordPiece tokenizer.json with a small vocabulary, and an ONNX graph (built with
 * onnx-proto) whose last_hidden_state is a lookup of each token in an embedding table.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { onnx } from 'onnx-proto';

/** The vocabulary: special tokens first, as BERT tokenizers order them. */
export const TINY_VOCAB = ['[PAD]', '[UNK]', '[CLS]', '[SEP]', 'the', 'levee', 'failed', 'bridge', 'fell', 'fire', 'burned', 'warehouse', 'police', 'arrested', 'a', 'man', '##s', 'in', 'on', 'monday', '.', ','];

/** Writes the model folder; returns the embedding table (row per token id). */
export function writeTinyModel(dir: string, hidden = 8): number[][] {
  mkdirSync(join(dir, 'onnx'), { recursive: true });
  // A deterministic table: values from a fixed formula, no randomness.
  const table = TINY_VOCAB.map((_, id) => Array.from({ length: hidden }, (_, j) => Math.sin(1 + id * 7 + j * 3) + (id === j ? 1 : 0)));
  const model = onnx.ModelProto.create({
    irVersion: 7,
    producerName: 'strandline-tests',
    opsetImport: [{ domain: '', version: 13 }],
    graph: {
      name: 'tiny-embedder',
      node: [{ opType: 'Gather', input: ['embeddings', 'input_ids'], output: ['last_hidden_state'], name: 'lookup', attribute: [{ name: 'axis', type: onnx.AttributeProto.AttributeType.INT, i: 0 }] }],
      initializer: [{ name: 'embeddings', dims: [TINY_VOCAB.length, hidden], dataType: onnx.TensorProto.DataType.FLOAT, floatData: table.flat() }],
      input: [tensor('input_ids', onnx.TensorProto.DataType.INT64, ['batch', 'sequence']), tensor('attention_mask', onnx.TensorProto.DataType.INT64, ['batch', 'sequence'])],
      output: [tensor('last_hidden_state', onnx.TensorProto.DataType.FLOAT, ['batch', 'sequence', hidden])],
    },
  });
  writeFileSync(join(dir, 'onnx', 'model.onnx'), onnx.ModelProto.encode(model).finish());
  writeFileSync(join(dir, 'config.json'), JSON.stringify({ model_type: 'bert', architectures: ['BertModel'], hidden_size: hidden, vocab_size: TINY_VOCAB.length, max_position_embeddings: 64 }));
  writeFileSync(join(dir, 'tokenizer_config.json'), JSON.stringify({ tokenizer_class: 'BertTokenizer', do_lower_case: true, model_max_length: 64, cls_token: '[CLS]', sep_token: '[SEP]', pad_token: '[PAD]', unk_token: '[UNK]' }));
  const special = (content: string, id: number) => ({ id, content, single_word: false, lstrip: false, rstrip: false, normalized: false, special: true });
  writeFileSync(join(dir, 'tokenizer.json'), JSON.stringify({
    version: '1.0',
    truncation: null,
    padding: null,
    added_tokens: ['[PAD]', '[UNK]', '[CLS]', '[SEP]'].map((t, i) => special(t, i)),
    normalizer: { type: 'BertNormalizer', clean_text: true, handle_chinese_chars: true, strip_accents: null, lowercase: true },
    pre_tokenizer: { type: 'BertPreTokenizer' },
    post_processor: {
      type: 'TemplateProcessing',
      single: [{ SpecialToken: { id: '[CLS]', type_id: 0 } }, { Sequence: { id: 'A', type_id: 0 } }, { SpecialToken: { id: '[SEP]', type_id: 0 } }],
      pair: [{ SpecialToken: { id: '[CLS]', type_id: 0 } }, { Sequence: { id: 'A', type_id: 0 } }, { SpecialToken: { id: '[SEP]', type_id: 0 } }, { Sequence: { id: 'B', type_id: 1 } }, { SpecialToken: { id: '[SEP]', type_id: 1 } }],
      special_tokens: { '[CLS]': { id: '[CLS]', ids: [2], tokens: ['[CLS]'] }, '[SEP]': { id: '[SEP]', ids: [3], tokens: ['[SEP]'] } },
    },
    decoder: { type: 'WordPiece', prefix: '##', cleanup: true },
    model: { type: 'WordPiece', unk_token: '[UNK]', continuing_subword_prefix: '##', max_input_chars_per_word: 100, vocab: Object.fromEntries(TINY_VOCAB.map((t, i) => [t, i])) },
  }));
  return table;
}

function tensor(name: string, elemType: number, dims: (string | number)[]) {
  return { name, type: { tensorType: { elemType, shape: { dim: dims.map((d) => (typeof d === 'string' ? { dimParam: d } : { dimValue: d })) } } } };
}
