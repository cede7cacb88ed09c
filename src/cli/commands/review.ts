/**
 * `strandline review`: draw a round from the stored decisions, report what its answers say,
 * and `simulate`: what reviews would do on annotated corpora, before anyone reviews
 * (eval/review-simulation.ts): the fitted threshold's regret against the configured one's,
 * and whether the quality estimates' intervals hold the true values.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { readCorpus } from '../../eval/corpus.js';
import { type ReviewSimRow, simulateReviews } from '../../eval/review-simulation.js';
import { defaultSweep } from '../../eval/run-eval.js';
import { StrandError } from '../../errors.js';
import { drawRound, liveDecisions, nanAsNull, roundReport } from '../../review/rounds.js';
import type { Estimate } from '../../review/estimate.js';
import { reviewGold } from '../../review/gold-export.js';
import { type CommonOptions, setup, withStore } from '../common.js';

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

export interface ReviewDrawOptions extends CommonOptions {
  size: number;
  reviewers: number;
  from?: string;
  to?: string;
  seed?: number;
}

const DAY_OR_TIME = /^\d{4}-\d{2}-\d{2}(T[0-9:.]+(Z|[+-]\d{2}:\d{2}))?$/;

/** `strandline review draw`: a new round from the stored decisions; prints its id and design. */
export async function reviewDrawCommand(opts: ReviewDrawOptions): Promise<number> {
  for (const [flag, v] of [
    ['--from', opts.from],
    ['--to', opts.to],
  ] as const) {
    if (v !== undefined && !DAY_OR_TIME.test(v))
      throw new StrandError('STRAND_REQUEST_INVALID', `${flag} takes a day (YYYY-MM-DD) or an RFC 3339 time`);
  }
  return withStore(opts, async (store) => {
    const decisions = await liveDecisions(store, { from: opts.from, to: opts.to, maxEvents: 100_000 });
    if (decisions.length === 0) throw new StrandError('STRAND_REVIEW_EMPTY', 'no linking decisions to review in that window');
    const round = drawRound(decisions, {
      size: opts.size,
      reviewersPerItem: opts.reviewers,
      margin: 0.1,
      seed: opts.seed ?? Math.floor(Math.random() * 2 ** 31),
      by: 'local',
      now: new Date(),
    });
    await store.addReviewRound(round);
    const design = round.design.map((d) => `  ${d.stratum.padEnd(18)} ${String(d.sampled).padStart(5)} of ${d.population}`).join('\n');
    process.stdout.write(
      `review round ${round.id}: ${round.items.length} item(s), ${round.reviewersPerItem} reviewer(s) each\n${design}\n`,
    );
    return 0;
  });
}

/** `strandline review report <round>`: what its answers say, as text or JSON. */
export async function reviewReportCommand(id: string, opts: CommonOptions & { json?: boolean }): Promise<number> {
  if (!/^rv_[0-9a-f]{12}$/.test(id))
    throw new StrandError('STRAND_REQUEST_INVALID', `a review round id is rv_ and 12 hex digits, not ${JSON.stringify(id.slice(0, 40))}`);
  return withStore(opts, async (store) => {
    const round = await store.getReviewRound(id);
    if (!round) throw new StrandError('STRAND_NOT_FOUND', `no review round ${id}`);
    const r = roundReport(round, await store.reviewAnswers(id));
    if (opts.json) {
      process.stdout.write(`${JSON.stringify(r, nanAsNull, 2)}\n`);
      return 0;
    }
    const pct = (x: number) => (Number.isFinite(x) ? `${(x * 100).toFixed(0)}%` : '-');
    const est = (e: Estimate) =>
      Number.isFinite(e.value) ? `${pct(e.value)} (95% ${pct(e.low)}-${pct(e.high)}, ${e.answers} answers)` : 'not enough answers';
    const lines = [
      `round ${id}: ${r.answered} of ${r.items} item(s) answered, ${r.complete} complete, ${r.answers} answer(s)`,
      `agreement (Krippendorff's alpha, nominal): ${r.alpha.overall === null ? '-' : r.alpha.overall.toFixed(3)}`,
      `precision ${est(r.quality.overall.precision)}`,
      `recall    ${est(r.quality.overall.recall)} (over the linker's candidates)`,
      `merges    ${est(r.quality.overall.merges)} (consolidation's merges found right)`,
      `back-references ${est(r.quality.overall.backReferences)} (links to an event the sentence points back at, found right)`,
      ...r.reviewers.map(
        (x) =>
          `  ${x.reviewer.padEnd(20)} ${String(x.answers).padStart(5)} answers, ${x.unsure} unsure, error rate ${x.errorRate === null ? '-' : pct(x.errorRate)}, alpha without them ${x.alphaWithout === null ? '-' : x.alphaWithout.toFixed(3)}`,
      ),
      r.calibration.validated
        ? `threshold: the answers suggest moving it by ${r.calibration.offset >= 0 ? '+' : ''}${r.calibration.offset.toFixed(3)} (held-out F1 ${r.calibration.cvF1Before.toFixed(2)} -> ${r.calibration.cvF1After.toFixed(2)}); apply it from the page or POST /api/link-threshold`
        : r.calibration.placed && r.calibration.fitted !== 0
          ? `threshold: the fit would move it by ${r.calibration.fitted.toFixed(3)} but does no better on held-out answers; leave it`
          : 'threshold: the answers do not place the bar within reach; leave it',
    ];
    process.stdout.write(`${lines.join('\n')}\n`);
    return 0;
  });
}

/** `strandline review gold <round> <dir>`: the round's answers written as a corpus folder that `strandline eval` reads. */
export async function reviewGoldCommand(id: string, dir: string, opts: CommonOptions): Promise<number> {
  if (!/^rv_[0-9a-f]{12}$/.test(id))
    throw new StrandError('STRAND_REQUEST_INVALID', `a review round id is rv_ and 12 hex digits, not ${JSON.stringify(id.slice(0, 40))}`);
  return withStore(opts, async (store) => {
    const round = await store.getReviewRound(id);
    if (!round) throw new StrandError('STRAND_NOT_FOUND', `no review round ${id}`);
    const g = await reviewGold(store, round, await store.reviewAnswers(id));
    if (g.gold.length === 0) throw new StrandError('STRAND_REVIEW_EMPTY', `round ${id} has no answered item to write as gold yet`);
    mkdirSync(dir, { recursive: true });
    writeFileSync(join(dir, 'articles.jsonl'), g.articles.map((a) => JSON.stringify(a)).join('\n') + '\n');
    writeFileSync(join(dir, 'gold.jsonl'), g.gold.map((l) => JSON.stringify(l)).join('\n') + '\n');
    process.stdout.write(
      `wrote ${g.articles.length} article(s) and ${g.gold.length} gold line(s) to ${dir}; left out ${g.skipped.unanswered} unanswered item(s) and ${g.skipped.erased} whose text is no longer stored\n`,
    );
    return 0;
  });
}
