/**
 * The evaluation's threshold sweep on worker threads: each point is a whole link run on a
 * fresh in-memory store, independent of the others, so the points run side by side while
 * the main thread runs the configured point and the baselines. The batch baseline's merges
 * (all pairs, the costliest baseline) run there too. Each thread runs the same code on a
 * copy of the same input, so the answers do not depend on the thread count.
 */
import { availableParallelism } from 'node:os';
import type { Config } from '../config/schema.js';
import { StrandError } from '../errors.js';
import type { DetectedWork } from '../pipeline/index.js';
import type { EmbeddedMention } from '../records.js';
import { startThreadPool } from '../thread-pool.js';
import type { Clustering, Merge } from './baselines.js';

/** One link run: the configuration (with the point's threshold), the analysed input, the clock. */
export interface SweepTask {
  kind?: 'link';
  config: Readonly<Config>;
  detected: readonly DetectedWork[];
  /** The time undated articles are given, as in the main thread's runs. */
  created: string;
}

/** The batch baseline's merges over these mentions. */
export interface MergesTask {
  kind: 'merges';
  mentions: readonly EmbeddedMention[];
  halfLifeDays: number;
}

/** The merges, and the seconds they took on the thread. */
export interface MergesAnswer {
  merges: Merge[];
  seconds: number;
}

/** What a link run gave: its clustering and the wall time of its link stage, seconds. */
export interface SweepAnswer {
  clustering: Clustering;
  seconds: number;
}

/** Runs sweep points off the main thread. */
export interface SweepPool {
  readonly threads: number;
  run(task: SweepTask): Promise<SweepAnswer>;
  /** The batch baseline's merges, with the seconds they took. */
  merges(mentions: readonly EmbeddedMention[], halfLifeDays: number): Promise<MergesAnswer>;
  close(): Promise<void>;
}

/** `auto`: one thread per core, at most 4 (each holds a copy of the corpus and a store). */
export function sweepThreads(setting: 'auto' | number, cores = availableParallelism()): number {
  return setting === 'auto' ? Math.min(4, cores) : setting;
}

/** Starts `threads` sweep threads and resolves once every one has answered. */
export async function startSweepPool(threads: number): Promise<SweepPool> {
  const pool = await startThreadPool<SweepTask | MergesTask, SweepAnswer | MergesAnswer>('sweep-thread', import.meta.url, threads, {
    what: 'sweep',
    failCode: 'STRAND_EVAL_FAILED',
  });
  return {
    threads,
    async run(task) {
      try {
        return (await pool.run({ ...task, kind: 'link' })) as SweepAnswer;
      } catch (err) {
        throw new StrandError(
          'STRAND_EVAL_FAILED',
          `a sweep thread failed at threshold ${task.config.link.threshold}: ${(err as Error).message}`,
          {
            cause: err,
          },
        );
      }
    },
    async merges(mentions, halfLifeDays) {
      try {
        return (await pool.run({ kind: 'merges', mentions, halfLifeDays })) as MergesAnswer;
      } catch (err) {
        throw new StrandError('STRAND_EVAL_FAILED', `a sweep thread failed on the batch baseline: ${(err as Error).message}`, {
          cause: err,
        });
      }
    },
    close: () => pool.close({ force: true }),
  };
}
