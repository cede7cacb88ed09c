/**
 * The pipeline with the transformer embedder against the model's raw throughput. The
 * model has MiniLM-L6-sized compute (hidden size 384; nine residual feed-forward blocks of
 * 384 x 1536 x 384 multiply-adds, about 10.6 million per token, as MiniLM-L6's six
 * attention-plus-feed-forward layers) with generated weights, written by
 * build-onnx-model.ts. Raw: the mentions the pipeline embedded, embedded again alone in
 * batches. Pipeline: the whole replay of the demo with that model.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { from, lastValueFrom, toArray } from 'rxjs';
import { parseConfig } from '../config/load-config.js';
import { TransformerEmbedder } from '../embed/transformer-embedder.js';
import { createLogger } from '../logger.js';
import { runPipeline } from '../pipeline.js';
import type { Article } from '../records.js';
import { createRuntime } from '../runtime.js';
import { openSqliteStore } from '../store/sqlite/sqlite-store.js';
import { SPECIAL_TOKENS, writeModel } from './build-onnx-model.js';

/** Measured throughput. */
export interface TransformerRow {
  mentions: number;
  rawSeconds: number;
  pipelineSeconds: number;
  /** Raw time over pipeline time: the share of the model's throughput the pipeline keeps. */
  ratio: number;
}

/** Builds the model, replays `articles` with it, then embeds the same mentions alone. */
export async function transformerThroughput(articles: readonly Article[]): Promise<TransformerRow> {
  const dir = mkdtempSync(join(tmpdir(), 'strandline-model-'));
  try {
    const words = new Set<string>();
    for (const a of articles) for (const w of a.text.toLowerCase().match(/[a-z]+|[0-9]+|[^\sa-z0-9]/g) ?? []) words.add(w);
    writeModel(join(dir, 'minilm-sized'), { vocab: [...SPECIAL_TOKENS, ...[...words].sort()], hidden: 384, blocks: 9 });
    const config = parseConfig({ store: { path: ':memory:' }, embed: { kind: 'transformer', modelPath: join(dir, 'minilm-sized') }, log: { level: 'silent' } });
    const rt = await createRuntime(config, createLogger('silent'), openSqliteStore(':memory:'));
    const t0 = performance.now();
    await lastValueFrom(runPipeline(from(articles), rt).pipe(toArray()));
    const pipelineSeconds = (performance.now() - t0) / 1000;
    const texts: string[] = [];
    for (const a of articles) for (const s of (await rt.store.getArticle(a.id))!.sentences) if (s.isMention) texts.push(s.text);
    await rt.close();
    const embedder = await TransformerEmbedder.load(config.embed.modelPath, config.embed.batchSize, config.embed.threads);
    const t1 = performance.now();
    await embedder.embed(texts.map((text) => ({ text, terms: [] })));
    const rawSeconds = (performance.now() - t1) / 1000;
    return { mentions: texts.length, rawSeconds, pipelineSeconds, ratio: rawSeconds / pipelineSeconds };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
