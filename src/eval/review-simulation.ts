/**
 * Reviews simulated on an annotated corpus, to measure what the review loop is worth before
 * anyone reviews: the linker runs at the configured threshold; the review queue's own
 * sample is drawn from its decisions; each sampled decision is answered from the gold
 * annotation with some reviewer noise; the threshold is fitted to the answers and the
 * linker run again at the fitted threshold. Reported per run: CoNLL F1 regret (best over
 * the sweep minus the score) before and after, and whether the precision and recall
 * intervals estimated from a second, larger sample (five noisy reviewers per decision,
 * combined with Dawid–Skene) hold the true values, computed from gold over every decision.
 */
import type { Config } from '../config/schema.js';
import { createEmbedder } from '../embed/create-embedder.js';
import type { Logger } from '../logger.js';
import { suggestOffset } from '../review/calibrate.js';
import { dawidSkene } from '../review/dawid-skene.js';
import { estimateQuality } from '../review/estimate.js';
import { liveDecisions } from '../review/rounds.js';
import { AT_THRESHOLD, type ReviewCandidate, drawSample } from '../review/sampling.js';
import { seededRandom } from '../seeded-random.js';
import { createNlp } from '../text/nlp.js';
import type { Clustering } from './baselines.js';
import { clusteringOf, follow, goldMemberships, partition, restrict } from './clusterings.js';
import type { EvalCorpus } from './corpus.js';
import { linkDetected } from './link-detected.js';
import { conllScores } from './partition-metrics.js';
import { detectArticles, mentionKey, selector, toArticles } from './prepare-mentions.js';

export interface ReviewSimOptions {
  config: Readonly<Config>;
  logger: Logger;
  /** Thresholds the best is sought over. */
  thresholds: readonly number[];
  /** Reviewed decisions the fit gets, and the reviewer noise (share of answers flipped). */
  reviews: number;
  noise: number;
  /** Reviewed decisions the quality estimate gets (five reviewers each). */
  estimateReviews: number;
  runs: number;
  /** Stratum margin of the queue. */
  margin: number;
}

export interface ReviewSimRun {
  seed: number;
  offset: number;
  threshold: number;
  conllAfter: number;
  regretAfter: number;
  cvF1Before: number;
  cvF1After: number;
  precision: { value: number; low: number; high: number; covers: boolean };
  recall: { value: number; low: number; high: number; covers: boolean };
}

export interface ReviewSimRow {
  corpus: string;
  candidates: number;
  judgeable: number;
  threshold: number;
  conllBefore: number;
  best: { threshold: number; conll: number };
  regretBefore: number;
  truePrecision: number;
  trueRecall: number;
  runs: ReviewSimRun[];
}

/** A decision and whether it was right by gold (null when gold cannot tell). */
interface Judged {
  candidate: ReviewCandidate;
  same: boolean;
}

export async function simulateReviews(corpus: EvalCorpus, o: ReviewSimOptions): Promise<ReviewSimRow> {
  const created = new Date().toISOString();
  const nlp = createNlp();
  const { input } = corpus;
  const articles = toArticles(input, corpus.source, created);
  const inScope = (key: string) => !input.scope || input.scope.has(key);
  const gold = restrict(goldMemberships(input), inScope);
  const goldPartition = partition(gold);
  const detected = await detectArticles(nlp, articles, selector(input, 'gold'), o.config, await createEmbedder(o.config.embed));
  const deps = { nlp, logger: o.logger, now: () => new Date(created) };
  const withThreshold = (t: number): Readonly<Config> => ({ ...o.config, link: { ...o.config.link, threshold: t } });
  const conllAt = new Map<number, number>();
  const conll = async (t: number, inspect?: Parameters<typeof linkDetected>[3]): Promise<number> => {
    const key = Math.round(t * 1000) / 1000;
    if (conllAt.has(key) && !inspect) return conllAt.get(key)!;
    const run = await linkDetected(withThreshold(key), detected, deps, inspect);
    const score = conllScores(goldPartition, partition(restrict(clusteringOf(run.outcomes), inScope))).conllF1;
    conllAt.set(key, score);
    return score;
  };

  let judged: Judged[] = [];
  let candidates = 0;
  const base = o.config.link.threshold;
  const conllBefore = await conll(base, async (store, outcomes) => {
    // The decisions as the review queue lists them, through its own code.
    const all = await liveDecisions(store, { maxEvents: Number.MAX_SAFE_INTEGER });
    candidates = all.length;
    const redirect = new Map(outcomes.flatMap((x) => x.merges.map((m) => [m.from, m.into] as const)));
    judged = judge(all, clusteringOf(outcomes), redirect, gold, inScope);
  });
  for (const t of o.thresholds) await conll(t);
  const [bestT, bestScore] = [...conllAt].reduce((a, b) => (b[1] > a[1] ? b : a));

  const pool = judged.map((j) => j.candidate);
  const truth = new Map(judged.map((j) => [keyOf(j.candidate), j.same]));
  // Merges and back-references are estimated apart; precision and recall are the links'.
  const links = judged.filter((j) => j.candidate.linked && !j.candidate.mergedFrom && !j.candidate.refersBack);
  const tp = links.filter((j) => j.same).length;
  const fn = judged.filter((j) => !j.candidate.linked && j.same).length;
  const truePrecision = tp / links.length;
  const trueRecall = tp / (tp + fn);

  const runs: ReviewSimRun[] = [];
  for (let seed = 1; seed <= o.runs; seed++) {
    const rnd = seededRandom(seed * 7919);
    // The fit: one noisy answer per sampled decision.
    const fitSample = drawSample(pool, o.reviews, { margin: o.margin, seed });
    const weightOf = new Map(fitSample.design.map((d) => [d.stratum, d.sampled ? d.population / d.sampled : 0]));
    const items = fitSample.items
      .filter((c) => AT_THRESHOLD.has(c.stratum))
      .map((c) => ({
        margin: c.score - c.bar,
        same: truth.get(keyOf(c))! !== rnd() < o.noise,
        weight: weightOf.get(c.stratum)!,
      }));
    const cv = suggestOffset(items, seed);
    const { offset } = cv;
    const threshold = Math.round((base + offset) * 1000) / 1000;
    const after = await conll(threshold);
    // The estimate: five noisy reviewers per decision, combined.
    const estSample = drawSample(pool, o.estimateReviews, { margin: o.margin, seed: seed + 1000 });
    const answers = estSample.items.flatMap((c, i) =>
      [0, 1, 2, 3, 4].map((r) => ({ item: String(i), reviewer: `r${r}`, answer: truth.get(keyOf(c))! !== rnd() < o.noise ? 1 : 0 })),
    );
    const combined = dawidSkene(answers, 2).labels;
    const est = estimateQuality(
      estSample.design,
      estSample.items.map((c, i) => ({ stratum: c.stratum, same: combined.get(String(i)) === 1 })),
    );
    const covers = (e: { low: number; high: number }, v: number) => e.low <= v && v <= e.high;
    runs.push({
      seed,
      offset,
      threshold,
      conllAfter: after,
      regretAfter: bestScore - after,
      cvF1Before: cv.f1Before,
      cvF1After: cv.f1After,
      precision: { ...pick(est.precision), covers: covers(est.precision, truePrecision) },
      recall: { ...pick(est.recall), covers: covers(est.recall, trueRecall) },
    });
  }
  return {
    corpus: corpus.name,
    candidates,
    judgeable: judged.length,
    threshold: base,
    conllBefore,
    best: { threshold: bestT, conll: bestScore },
    regretBefore: bestScore - conllBefore,
    truePrecision,
    trueRecall,
    runs,
  };
}

const pick = (e: { value: number; low: number; high: number }) => ({ value: e.value, low: e.low, high: e.high });
const keyOf = (c: ReviewCandidate) => `${mentionKey(c.articleId, c.sentenceIndex)}\n${c.eventId}\n${c.linked}`;

/**
 * Whether each decision was right by gold: a link is right when the sentence's gold event
 * is the event's (the gold event most of its other sentences have); a miss was a missed
 * link when the nearest event's gold event is the sentence's. Decisions gold cannot tell
 * (sentences outside the annotation, events with no other annotated sentence, a nearest
 * event that has since absorbed the sentence's own) are left out.
 */
function judge(
  all: readonly ReviewCandidate[],
  system: Clustering,
  redirect: ReadonlyMap<string, string>,
  gold: Clustering,
  inScope: (k: string) => boolean,
): Judged[] {
  const members = new Map<string, string[]>();
  for (const [key, events] of system) for (const e of events) (members.get(e) ?? members.set(e, []).get(e)!).push(key);
  // An event id of a decision may have been merged into another since: follow it.
  const current = (id: string) => (members.has(id) ? id : follow(redirect, id));
  const goldOf = (eventId: string, except: string): string | null => {
    const votes = new Map<string, number>();
    for (const k of members.get(eventId) ?? []) {
      if (k === except || !inScope(k)) continue;
      for (const g of gold.get(k) ?? []) votes.set(g, (votes.get(g) ?? 0) + 1);
    }
    let best: string | null = null;
    for (const [g, n] of votes) if (best === null || n > votes.get(best)!) best = g;
    return best;
  };
  const out: Judged[] = [];
  for (const c of all) {
    const key = mentionKey(c.articleId, c.sentenceIndex);
    if (!inScope(key) || !gold.has(key)) continue;
    const eventId = current(c.eventId);
    if (!c.linked && (system.get(key) ?? []).includes(eventId)) continue;
    const g = goldOf(eventId, key);
    if (g === null) continue;
    out.push({ candidate: c, same: gold.get(key)!.includes(g) });
  }
  return out;
}
