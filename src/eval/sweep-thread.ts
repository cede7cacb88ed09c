/**
 * The body of a sweep thread: one link run of the evaluation per task, answered as the
 * clustering it gave, or the batch baseline's merges. Loaded by piscina from
 * sweep-pool.ts; never imported by the main thread.
 */
import { createLogger } from '../logger.js';
import { createNlp } from '../text/nlp.js';
import { averageLinkMerges } from './baselines.js';
import { clusteringOf } from './clusterings.js';
import { linkDetected } from './link-detected.js';
import type { MergesAnswer, MergesTask, SweepAnswer, SweepTask } from './sweep-pool.js';

// The link stage does not analyse text, but its context carries a language model.
const nlp = createNlp();
const logger = createLogger('silent');

/** `null` is the start-up probe: answering it proves the thread loaded. */
export default async function runTask(task: SweepTask | MergesTask | null): Promise<SweepAnswer | MergesAnswer | null> {
  if (!task) return null;
  if (task.kind === 'merges') {
    const t0 = performance.now();
    const merges = averageLinkMerges(task.mentions, task.halfLifeDays);
    return { merges, seconds: (performance.now() - t0) / 1000 };
  }
  const run = await linkDetected(task.config, task.detected, { nlp, logger, now: () => new Date(task.created) });
  return { clustering: clusteringOf(run.outcomes), seconds: run.seconds };
}
