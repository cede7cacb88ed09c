/**
 * `strandline review simulate`: what reviews would do on annotated corpora, before anyone
 * reviews (eval/review-simulation.ts): the fitted threshold's regret against the
 * configured one's, and whether the quality estimates' intervals hold the true values.
 */
import { readCorpus } from '../../eval/corpus.js';
import { type ReviewSimRow, simulateReviews } from '../../eval/review-simulation.js';
import { defaultSweep } from '../../eval/run-eval.js';
import { StrandError } from '../../errors.js';
import { type CommonOptions, setup } from '../common.js';

export interface ReviewSimulateOptions extends CommonOptions {
  corpus?: string[];
  reviews: number;
  noise: number;
  estimateReviews: number;
  runs: number;
  json?: boolean;
}

const points = (x: number) => (x * 100).toFixed(1);
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor((xs.length - 1) / 2)]!;

/** One line per corpus, in CoNLL F1 points and run counts. */
export function formatReviewSim(rows: readonly ReviewSimRow[]): string {
  const head =
    'corpus            decisions  regret at configured  after fit (median / worst)  threshold moved  precision covered  recall covered';
  const lines = rows.map((r) => {
    const after = r.runs.map((x) => x.regretAfter);
    const moved = r.runs.filter((x) => x.offset !== 0).length;
    return [
      r.corpus.padEnd(17),
      String(r.judgeable).padStart(9),
      `${points(r.regretBefore)} (best ${r.best.threshold})`.padStart(21),
      `${points(median(after))} / ${points(Math.max(...after))}`.padStart(27),
      `${moved}/${r.runs.length} runs`.padStart(16),
      `${r.runs.filter((x) => x.precision.covers).length}/${r.runs.length}`.padStart(18),
      `${r.runs.filter((x) => x.recall.covers).length}/${r.runs.length}`.padStart(15),
    ].join('  ');
  });
  return `${head}\n${lines.join('\n')}\n`;
}

export async function reviewSimulateCommand(opts: ReviewSimulateOptions): Promise<number> {
  const { config, logger } = setup(opts);
  if (!opts.corpus?.length) throw new StrandError('STRAND_CONFIG_INVALID', 'give corpus folders with --corpus <dir> (repeatable)');
  const rows: ReviewSimRow[] = [];
  for (const dir of opts.corpus) {
    rows.push(
      await simulateReviews(await readCorpus(dir), {
        config,
        logger,
        thresholds: defaultSweep(),
        reviews: opts.reviews,
        noise: opts.noise,
        estimateReviews: opts.estimateReviews,
        runs: opts.runs,
        margin: 0.1,
      }),
    );
  }
  process.stdout.write(opts.json ? `${JSON.stringify(rows, null, 2)}\n` : formatReviewSim(rows));
  return 0;
}
