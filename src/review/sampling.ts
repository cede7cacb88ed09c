/**
 * The review queue's sample: which links (and near misses) reviewers are asked about.
 *
 * Every decision the linker made about a sentence is a candidate: a link it made (the
 * sentence joined the event) or a miss it may have made (the sentence opened an event of
 * its own; its nearest known event was the other choice). Candidates fall into strata:
 *
 *   near-bar           a link whose score cleared its bar by less than `margin`;
 *   confident          a link that cleared it by more;
 *   cross-story        a link to an event of another story (rare, valuable, checked apart);
 *   conflicting-names  a link where the sentence and the event each name people or places
 *                      but share none (a wrong link's commonest look);
 *   near-miss          a miss whose nearest event fell short of the bar by less than `margin`;
 *   far-miss           a miss further below;
 *   merge              consolidation's merge of one event into another, asked about
 *                      through the sentence that opened the absorbed event (a large merge
 *                      moves many links at once). Merges are estimated apart from links.
 *   back-reference     a link made because the sentence points back at a happening its
 *                      article told before ("the move"): made on the wording, not at the
 *                      threshold, and estimated apart from links like merges.
 *
 * The sample takes the same number from each stratum (what a stratum lacks goes to the
 * others in turn), so that the rare and the easy are both asked about, and records each
 * stratum's size and sampling rate: an answer then stands for population / sampled
 * candidates of its stratum, which is what makes the estimates unbiased (estimate.ts).
 * Misses where the right event was never a candidate are outside every stratum: recall
 * is estimated over the linker's candidates.
 */
import { seededRandom } from '../seeded-random.js';

export const STRATA = [
  'near-bar',
  'confident',
  'cross-story',
  'near-miss',
  'far-miss',
  'conflicting-names',
  'merge',
  'back-reference',
] as const;
export type Stratum = (typeof STRATA)[number];

/** The strata of decisions made at the link threshold: the ones a threshold fit learns from. */
export const AT_THRESHOLD: ReadonlySet<Stratum> = new Set([
  'near-bar',
  'confident',
  'cross-story',
  'conflicting-names',
  'near-miss',
  'far-miss',
]);

/** One decision to review: a sentence and the event it was (or was nearly) linked to. */
export interface ReviewCandidate {
  articleId: string;
  sentenceIndex: number;
  eventId: string;
  /** True for a link the linker made, false for a miss (the sentence opened its own event). */
  linked: boolean;
  score: number;
  /** The score the link had (or would have had) to reach. */
  bar: number;
  crossStory: boolean;
  /** A link whose sentence and event each name people or places, none in common. */
  conflictingNames?: boolean;
  /** For a merge: the event consolidation merged into `eventId` (the sentence opened it). */
  mergedFrom?: string;
  /** A back-reference link (LinkEvidence.refersBack). */
  refersBack?: boolean;
  /** For reports by week and outlet. */
  outlet: string;
  published: string;
}

/** How a stratum was sampled. */
export interface StratumDesign {
  stratum: Stratum;
  population: number;
  sampled: number;
}

export interface ReviewSample {
  items: (ReviewCandidate & { stratum: Stratum })[];
  design: StratumDesign[];
  seed: number;
}

/** Which stratum a candidate falls in. */
export function stratumOf(c: ReviewCandidate, margin: number): Stratum {
  if (c.mergedFrom) return 'merge';
  if (c.refersBack) return 'back-reference';
  if (!c.linked) return c.bar - c.score < margin ? 'near-miss' : 'far-miss';
  if (c.crossStory) return 'cross-story';
  if (c.conflictingNames) return 'conflicting-names';
  return c.score - c.bar < margin ? 'near-bar' : 'confident';
}

/** Equal allocation of `n` over the strata, capped by their sizes, the rest passed on. */
export function allocate(sizes: ReadonlyMap<Stratum, number>, n: number): Map<Stratum, number> {
  const take = new Map<Stratum, number>(STRATA.map((s) => [s, 0]));
  let left = Math.min(
    n,
    [...sizes.values()].reduce((a, b) => a + b, 0),
  );
  while (left > 0) {
    const open = STRATA.filter((s) => take.get(s)! < (sizes.get(s) ?? 0));
    const each = Math.max(1, Math.floor(left / open.length));
    for (const s of open) {
      if (left === 0) break;
      const more = Math.min(each, (sizes.get(s) ?? 0) - take.get(s)!, left);
      take.set(s, take.get(s)! + more);
      left -= more;
    }
  }
  return take;
}

/** Draws `n` candidates by stratum, each stratum by a seeded shuffle. */
export function drawSample(candidates: readonly ReviewCandidate[], n: number, o: { margin?: number; seed?: number } = {}): ReviewSample {
  const margin = o.margin ?? 0.1;
  const seed = o.seed ?? 1;
  const rnd = seededRandom(seed);
  const by = new Map<Stratum, ReviewCandidate[]>(STRATA.map((s) => [s, []]));
  for (const c of candidates) by.get(stratumOf(c, margin))!.push(c);
  const take = allocate(new Map([...by].map(([s, list]) => [s, list.length])), n);
  const items: ReviewSample['items'] = [];
  for (const s of STRATA) {
    const list = [...by.get(s)!];
    // Fisher–Yates, as far as needed.
    const k = take.get(s)!;
    for (let i = 0; i < k; i++) {
      const j = i + Math.floor(rnd() * (list.length - i));
      [list[i], list[j]] = [list[j]!, list[i]!];
      items.push({ ...list[i]!, stratum: s });
    }
  }
  return { items, design: STRATA.map((s) => ({ stratum: s, population: by.get(s)!.length, sampled: take.get(s)! })), seed };
}
