/**
 * Times `strandline eval` as a user runs it (both settings, the default threshold sweep,
 * sweep threads, every baseline) on a synthetic corpus of 6,000 articles, and prints JSON:
 * articles, gold mentions, total seconds and each system's seconds. A process of its own,
 * like the other heavy rows, so earlier workloads' heaps do not slow it.
 */
import { parseConfig } from '../config/load-config.js';
import { checkEvalInput } from '../eval/eval-input.js';
import { defaultSweep, runEval } from '../eval/run-eval.js';
import { sweepThreads } from '../eval/sweep-pool.js';
import { createLogger } from '../logger.js';
import { syntheticStream } from './synthetic-stream.js';

/** What the eval-speed run measured. */
export interface EvalSpeedRow {
  level: 'article' | 'sentence';
  articles: number;
  goldMentions: number;
  seconds: number;
  /** Per setting: the text stage, then each system's clustering, seconds. */
  parts: { setting: string; textSeconds: number; systems: { name: string; seconds: number }[] }[];
}

// A smaller size may be given as the first argument, to try a change quickly; the second
// says the gold's level: 'article' (one event per article, the shape of a corpus of articles
// pooled by incident) or 'sentence' (every event sentence, about three per article).
const ARTICLES = Number(process.argv[2] ?? 6000);
const LEVEL = process.argv[3] === 'sentence' ? 'sentence' : 'article';
// The stream is sized in mentions; grown until it holds the articles wanted, then cut there.
let mentions = ARTICLES * 3;
let stream = syntheticStream(mentions, 11);
while (stream.articles.length < ARTICLES) stream = syntheticStream((mentions *= 1.5), 11);
const kept = new Set(stream.articles.slice(0, ARTICLES).map((a) => a.id));
const gold = stream.gold.filter((g) => kept.has(g.article));
const input = checkEvalInput({
  articles: stream.articles.filter((a) => kept.has(a.id)),
  // Article level: each article under the first event it reports.
  gold:
    LEVEL === 'sentence'
      ? gold
      : gold.filter((g, i) => i === 0 || gold[i - 1]!.article !== g.article).map((g) => ({ ...g, sentence: null })),
});
const t0 = performance.now();
const report = await runEval([{ name: 'synthetic', source: 'bench', input }], {
  config: parseConfig({ log: { level: 'silent' } }),
  settings: ['gold', 'predicted'],
  thresholds: defaultSweep(),
  sweep: 'refine',
  threads: sweepThreads('auto'),
  logger: createLogger('silent'),
});
const row: EvalSpeedRow = {
  level: LEVEL,
  articles: input.articles.length,
  goldMentions: input.gold.length,
  seconds: (performance.now() - t0) / 1000,
  parts: report.corpora[0]!.settings.map((s) => ({
    setting: s.setting,
    textSeconds: s.textSeconds,
    systems: s.systems.map((y) => ({ name: y.name, seconds: y.seconds })),
  })),
};
process.stdout.write(`${JSON.stringify(row)}\n`);
