/**
 * The pipeline with the transformer embedder against the model's raw throughput. The
 * model has MiniLM-L6-sized compute (hidden size 384; nine residual feed-forward blocks of
 * 384 x 1536 x 384 multiply-adds, about 10.6 million per token, as MiniLM-L6's six
 * attention-plus-feed-forward layers) with generated weights, written by
 * build-onnx-model.ts. Raw: the mentions the pipeline embedded, embedded again alone in
 * batches. Pipeline: the whole replay of the demo with that model. Each side is warmed up
 * once and then timed three times; the medians are compared.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { from, lastValueFrom, toArray } from 'rxjs';
import { parseConfig } from '../config/load-config.js';
import { TransformerEmbedder } from '../embed/transformer-embedder.js';
import { createLogger } from '../logger.js';
import { runPipeline } from '../pipeline/index.js';
import type { Article } from '../records.js';
import { createRuntime } from '../runtime.js';
import { analysisThreads, startAnalysisPool } from '../text/analysis-pool.js';
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

const RUNS = 3;

function median(xs: number[]): number {
  return [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;
}

/** Builds the model, replays `articles` with it, then embeds the same mentions alone. */
export async function transformerThroughput(articles: readonly Article[]): Promise<TransformerRow> {
  const dir = mkdtempSync(join(tmpdir(), 'strandline-model-'));
  try {
    const words = new Set<string>();
    for (const a of articles) for (const w of a.text.toLowerCase().match(/[a-z]+|[0-9]+|[^\sa-z0-9]/g) ?? []) words.add(w);
    writeModel(join(dir, 'minilm-sized'), { vocab: [...SPECIAL_TOKENS, ...[...words].sort()], hidden: 384, blocks: 9 });
    const config = parseConfig({
      store: { path: ':memory:' },
      embed: { kind: 'transformer', modelPath: join(dir, 'minilm-sized') },
      log: { level: 'silent' },
    });
    // Steady state on both sides: one warm-up run each, then the median of RUNS. The
    // analysis threads are started once and kept, as in a running service.
    const threads = analysisThreads(config.analysis.threads);
    const pool = threads > 0 ? await startAnalysisPool(threads) : undefined;
    const pipelineTimes: number[] = [];
    let texts: string[] = [];
    try {
      for (let run = 0; run <= RUNS; run++) {
        const rt = await createRuntime(config, createLogger('silent'), openSqliteStore(':memory:'), pool);
        await rt.embedder.embed([{ text: 'warm-up', terms: [] }]);
        const t0 = performance.now();
        await lastValueFrom(runPipeline(from(articles), rt).pipe(toArray()));
        if (run > 0) pipelineTimes.push((performance.now() - t0) / 1000);
        texts = [];
        for (const a of articles) for (const s of (await rt.store.getArticle(a.id))!.sentences) if (s.isMention) texts.push(s.text);
        await rt.close();
      }
    } finally {
      await pool?.close();
    }
    const embedder = await TransformerEmbedder.load(config.embed.modelPath, config.embed.batchSize, config.embed.threads);
    const inputs = texts.map((text) => ({ text, terms: [] }));
    const rawTimes: number[] = [];
    for (let run = 0; run <= RUNS; run++) {
      const t1 = performance.now();
      await embedder.embed(inputs);
      if (run > 0) rawTimes.push((performance.now() - t1) / 1000);
    }
    const rawSeconds = median(rawTimes);
    const pipelineSeconds = median(pipelineTimes);
    return { mentions: texts.length, rawSeconds, pipelineSeconds, ratio: rawSeconds / pipelineSeconds };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
