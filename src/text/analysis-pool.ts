/**
 * Article analysis on worker threads, so that splitting, tagging and date resolution
 * (about a third of the pipeline's time) run on other cores while the main thread links
 * and commits. Results are plain records (structured clone); the analysis is the same
 * code as on the main thread, so outcomes do not depend on the thread count.
 */
import { availableParallelism } from 'node:os';
import { StrandError } from '../errors.js';
import { startThreadPool } from '../thread-pool.js';
import type { Article } from '../records.js';
import type { AnalysedArticle } from './analyse-article.js';

/** Analyses articles off the main thread. */
export interface AnalysisPool {
  readonly threads: number;
  analyse(article: Article): Promise<AnalysedArticle>;
  close(): Promise<void>;
}

/** `auto`: one thread per core beyond the main one, at most 4 (the linker is serial, so more would idle). */
export function analysisThreads(setting: 'auto' | number, cores = availableParallelism()): number {
  return setting === 'auto' ? Math.min(4, Math.max(0, cores - 1)) : setting;
}

/** Most articles handed to one thread at a time; `analyse` callers keep within it. */
export const ANALYSIS_AHEAD = 64;

/**
 * Starts `threads` analysis threads (each loads its own language model, about 100 MB) and
 * resolves once every one has answered, so that a broken thread fails at start-up.
 */
export async function startAnalysisPool(threads: number): Promise<AnalysisPool> {
  // Tasks go straight to a thread's message port, which keeps them in order; piscina's own
  // queue (used past this many per thread) does not, and the pipeline needs input order.
  const pool = await startThreadPool<Article, AnalysedArticle>('analysis-thread', import.meta.url, threads, {
    what: 'analysis',
    failCode: 'STRAND_ANALYSIS_FAILED',
    concurrentTasksPerWorker: ANALYSIS_AHEAD,
  });
  return {
    threads,
    async analyse(article) {
      try {
        return (await pool.run(article)) as AnalysedArticle;
      } catch (err) {
        throw new StrandError('STRAND_ANALYSIS_FAILED', `analysis thread failed on article ${article.id}: ${(err as Error).message}`, {
          cause: err,
        });
      }
    },
    close: () => pool.close({ force: true }),
  };
}
