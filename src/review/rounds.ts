/**
 * Review rounds over a live store: draw the sample from the linker's decisions, hand each
 * reviewer the next item they have not answered, and report what the answers say
 * (agreement, each reviewer's estimated error rates, precision and recall with intervals
 * overall, by week and by outlet, and the threshold they suggest).
 */
import { randomBytes } from 'node:crypto';
import type { EventQueries, ReviewAnswer, ReviewItem, ReviewRound } from '../store/store.js';
import { eventIdFor } from '../link/event-state.js';
import { seededRandom } from '../seeded-random.js';
import { krippendorffAlpha } from './agreement.js';
import { suggestOffset } from './calibrate.js';
import { dawidSkene } from './dawid-skene.js';
import { type Estimate, estimateQuality } from './estimate.js';
import { AT_THRESHOLD, type ReviewCandidate, STRATA, type Stratum, drawSample } from './sampling.js';

/** Events read per page when listing the decisions of a window. */
const PAGE = 200;

/**
 * Every decision the linker made about sentences of events active in the window: its links,
 * its misses with their nearest event, and consolidation's merges into those events (each
 * through the sentence that opened the absorbed event; its bar is its own score, since a
 * merge is not a link decision and is kept out of the threshold's fit). Back-references
 * are asked about too, and kept out of the fit the same way: they follow the sentence's
 * wording, not the threshold.
 */
export async function liveDecisions(
  store: EventQueries,
  window: { from?: string; to?: string; maxEvents: number },
): Promise<ReviewCandidate[]> {
  const out: ReviewCandidate[] = [];
  for (let offset = 0; offset < window.maxEvents; offset += PAGE) {
    const page = await store.listEvents({ from: window.from, to: window.to, limit: Math.min(PAGE, window.maxEvents - offset), offset });
    for (const e of page.events) {
      const detail = await store.getEvent(e.id);
      const mentions = detail?.mentions ?? [];
      for (const m of mentions) {
        const about = { articleId: m.articleId, sentenceIndex: m.sentenceIndex, outlet: m.outlet, published: m.published };
        if (m.evidence.refersBack)
          out.push({ ...about, eventId: e.id, linked: true, score: m.score, bar: m.score, crossStory: false, refersBack: true });
        else if (!m.evidence.opened)
          out.push({
            ...about,
            eventId: e.id,
            linked: true,
            score: m.score,
            bar: m.evidence.bar ?? m.score,
            crossStory: m.evidence.crossStory === true,
            ...(m.evidence.conflictingNames ? { conflictingNames: true } : {}),
          });
        else if (m.evidence.nearest)
          out.push({
            ...about,
            eventId: m.evidence.nearest.eventId,
            linked: false,
            score: m.evidence.nearest.score,
            bar: m.evidence.nearest.bar,
            crossStory: false,
          });
      }
      for (const merge of detail?.merges ?? []) {
        const opener = mentions.find((m) => eventIdFor(m) === merge.from);
        if (!opener) continue; // split off again since
        out.push({
          articleId: opener.articleId,
          sentenceIndex: opener.sentenceIndex,
          outlet: opener.outlet,
          published: opener.published,
          eventId: e.id,
          linked: true,
          score: merge.score,
          bar: merge.score,
          crossStory: false,
          mergedFrom: merge.from,
        });
      }
    }
    if (offset + PAGE >= page.total) break;
  }
  return out;
}

export interface DrawOptions {
  size: number;
  reviewersPerItem: number;
  margin: number;
  seed: number;
  by: string;
  now: Date;
}

/** A new round over the decisions: the stratified sample, its items in a shuffled order so that reviewers see the strata mixed. */
export function drawRound(decisions: readonly ReviewCandidate[], o: DrawOptions): ReviewRound {
  const sample = drawSample(decisions, o.size, { margin: o.margin, seed: o.seed });
  const rnd = seededRandom(o.seed + 1);
  const order = sample.items.map((item) => ({ item, key: rnd() })).sort((a, b) => a.key - b.key);
  return {
    id: `rv_${randomBytes(6).toString('hex')}`,
    created: o.now.toISOString(),
    by: o.by,
    margin: o.margin,
    seed: o.seed,
    reviewersPerItem: o.reviewersPerItem,
    design: sample.design,
    items: order.map(({ item }, i) => ({ ...item, item: i })),
  };
}

/** The next item for a reviewer: the first they have not answered that still wants answers; null when none is left. */
export function nextItem(round: ReviewRound, answers: readonly ReviewAnswer[], reviewer: string): ReviewItem | null {
  const count = new Map<number, number>();
  const mine = new Set<number>();
  for (const a of answers) {
    count.set(a.item, (count.get(a.item) ?? 0) + 1);
    if (a.reviewer === reviewer) mine.add(a.item);
  }
  return round.items.find((i) => !mine.has(i.item) && (count.get(i.item) ?? 0) < round.reviewersPerItem) ?? null;
}

export interface RoundReport {
  items: number;
  answered: number;
  complete: number;
  answers: number;
  reviewers: { reviewer: string; answers: number; unsure: number; errorRate: number | null; alphaWithout: number | null }[];
  /** Krippendorff's alpha (nominal, "unsure" left out): overall and per stratum. Null where undefined. */
  alpha: { overall: number | null; byStratum: Partial<Record<Stratum, number | null>> };
  /** Precision and recall of the linker's links, and the precision of consolidation's merges and of back-references, from the combined answers. */
  quality: { overall: Quality; byWeek: ({ week: string } & Quality)[]; byOutlet: ({ outlet: string } & Quality)[] };
  /** The threshold move the answers suggest (0 unless held-out answers bear it out), the fit's own, and their held-out effect. */
  calibration: {
    offset: number;
    fitted: number;
    placed: boolean;
    validated: boolean;
    f1Before: number;
    f1After: number;
    cvF1Before: number;
    cvF1After: number;
    decided: number;
  };
}

interface Quality {
  precision: Estimate;
  recall: Estimate;
  merges: Estimate;
  backReferences: Estimate;
}

const VERDICT = { different: 0, same: 1 } as const;
const orNull = (x: number) => (Number.isFinite(x) ? x : null);

/** ISO 8601 week of a day, as 2026-W41 (weeks start on Monday; week 1 holds the year's first Thursday). */
export function isoWeek(iso: string): string {
  const d = new Date(`${iso.slice(0, 10)}T00:00:00Z`);
  if (Number.isNaN(d.getTime())) return 'undated';
  // The Thursday of the day's week decides the week's year.
  d.setUTCDate(d.getUTCDate() + 3 - ((d.getUTCDay() + 6) % 7));
  const yearStart = Date.UTC(d.getUTCFullYear(), 0, 1);
  const week = Math.floor((d.getTime() - yearStart) / 86_400_000 / 7) + 1;
  return `${d.getUTCFullYear()}-W${String(week).padStart(2, '0')}`;
}

/** The answers combined per item (Dawid–Skene with two reviewers or more; with one, as given). */
function combine(reviewers: readonly string[], decided: readonly ReviewAnswer[]) {
  // Error rates need reviewers to compare: with one, their answers stand as given.
  const combined =
    reviewers.length > 1
      ? dawidSkene(
          decided.map((a) => ({ item: String(a.item), reviewer: a.reviewer, answer: VERDICT[a.verdict as 'same' | 'different'] })),
          2,
        )
      : null;
  const same = new Map<number, boolean>();
  if (combined) for (const [item, label] of combined.labels) same.set(Number(item), label === 1);
  else for (const a of decided) same.set(a.item, a.verdict === 'same');
  return { combined, same };
}

/** Each answered item's combined verdict: true for the same event. */
export function roundVerdicts(answers: readonly ReviewAnswer[]): Map<number, boolean> {
  const decided = answers.filter((a) => a.verdict !== 'unsure');
  return combine([...new Set(decided.map((a) => a.reviewer))], decided).same;
}

/** JSON.stringify replacer: a number that is not (an estimate with nothing to rest on yet) as null. */
export const nanAsNull = (_key: string, v: unknown): unknown => (typeof v === 'number' && !Number.isFinite(v) ? null : v);

/** What a round's answers say so far. */
export function roundReport(round: ReviewRound, answers: readonly ReviewAnswer[]): RoundReport {
  const decided = answers.filter((a) => a.verdict !== 'unsure');
  const reviewers = [...new Set(answers.map((a) => a.reviewer))].sort();
  const byKey = new Map(decided.map((a) => [`${a.item}\n${a.reviewer}`, a]));
  const unitsOf = (keep: (a: ReviewAnswer) => boolean, items: readonly ReviewItem[] = round.items) =>
    items.map((i) =>
      reviewers.map((r) => {
        const a = byKey.get(`${i.item}\n${r}`);
        return a && keep(a) ? a.verdict : null;
      }),
    );
  const alpha = (units: (string | null)[][]) => orNull(krippendorffAlpha(units));
  const { combined, same } = combine([...new Set(decided.map((a) => a.reviewer))], decided);

  const quality = (keep: (i: ReviewItem) => boolean): Quality => {
    // The design of the slice: each stratum's population scaled by the share of its sample in the slice.
    const design = round.design.map((d) => {
      const inStratum = round.items.filter((i) => i.stratum === d.stratum);
      const kept = inStratum.filter(keep).length;
      return { ...d, population: inStratum.length ? (d.population * kept) / inStratum.length : 0, sampled: kept };
    });
    const items = round.items.filter((i) => keep(i) && same.has(i.item)).map((i) => ({ stratum: i.stratum, same: same.get(i.item)! }));
    return estimateQuality(design, items);
  };
  const weeks = [...new Set(round.items.map((i) => isoWeek(i.published)))].sort();
  const outlets = [...new Set(round.items.map((i) => i.outlet))].sort();
  const weightOf = new Map(round.design.map((d) => [d.stratum, d.sampled ? d.population / d.sampled : 0]));
  // Merges and back-references are not decisions at the threshold: it is fitted to links and misses only.
  const fitItems = round.items
    .filter((i) => same.has(i.item) && AT_THRESHOLD.has(i.stratum))
    .map((i) => ({ margin: i.score - i.bar, same: same.get(i.item)!, weight: weightOf.get(i.stratum)! }));
  const fit = suggestOffset(fitItems, round.seed);
  const count = new Map<number, number>();
  for (const a of answers) count.set(a.item, (count.get(a.item) ?? 0) + 1);
  return {
    items: round.items.length,
    answered: count.size,
    complete: [...count.values()].filter((n) => n >= round.reviewersPerItem).length,
    answers: answers.length,
    reviewers: reviewers.map((r) => ({
      reviewer: r,
      answers: answers.filter((a) => a.reviewer === r).length,
      unsure: answers.filter((a) => a.reviewer === r && a.verdict === 'unsure').length,
      errorRate: combined?.errorRates.get(r) ?? null,
      alphaWithout: alpha(unitsOf((a) => a.reviewer !== r)),
    })),
    alpha: {
      overall: alpha(unitsOf(() => true)),
      byStratum: Object.fromEntries(
        STRATA.map((s) => [
          s,
          alpha(
            unitsOf(
              () => true,
              round.items.filter((i) => i.stratum === s),
            ),
          ),
        ]),
      ),
    },
    quality: {
      overall: quality(() => true),
      byWeek: weeks.map((week) => ({ week, ...quality((i) => isoWeek(i.published) === week) })),
      byOutlet: outlets.map((outlet) => ({ outlet, ...quality((i) => i.outlet === outlet) })),
    },
    calibration: {
      offset: fit.offset,
      fitted: fit.fitted,
      placed: fit.placed,
      validated: fit.validated,
      f1Before: fit.f1Before,
      f1After: fit.f1After,
      cvF1Before: fit.cvF1Before,
      cvF1After: fit.cvF1After,
      decided: fitItems.length,
    },
  };
}
