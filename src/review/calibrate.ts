/**
 * Fitting the link decision to reviewed candidates: how far to move the link threshold.
 *
 * A reviewed candidate's margin is its score minus the bar it had to reach (negative for a
 * miss). Moving the threshold by `offset` moves every bar by it, so the decision becomes
 * "link when margin >= offset". The fit models the chance that a decision is right as a
 * logistic function of the margin, P(same | m) = 1 / (1 + exp(-(a + b m))), by weighted
 * maximum likelihood (each answer weighted by how many candidates of its stratum it stands
 * for, the sample's design), and puts the bar where a link becomes the more likely:
 * P = 1/2, m = -a / b (the Bayes decision with equal costs). Symmetric reviewer slips
 * flatten the curve but leave that point where it is, which a fit maximising F1 does not
 * (F1 also trades precision for recall, which clustering scores do not reward alike). The
 * move is made only when that point lies within `maxShift` of the present bar; when it does
 * not, or when the chance does not rise with the margin (b <= 0), the answers do not place
 * the bar and nothing moves (on real news the chance can stay near 1/2 over every score:
 * lexically alike reports of different happenings, as in encyclopedia text).
 * Cross-validation (k folds) reports the F1 of the decisions on answers the fit did not
 * see, before and after, so that an operator sees what applying it would change; a move is
 * suggested only when it does better there (suggestOffset), the usual check before
 * adopting a fitted change. On the development sets' simulations the fit's worst moves
 * (CoNLL regret of 11 to 14 points on wec-eng-val) did worse on held-out answers.
 */
import { seededRandom } from '../seeded-random.js';

export interface FitItem {
  /** Score minus bar. */
  margin: number;
  same: boolean;
  /** Candidates of its stratum this answer stands for. */
  weight: number;
}

export interface OffsetFit {
  offset: number;
  /** Weighted F1 of the decisions on the items, at offset 0 and at the fitted offset. */
  f1Before: number;
  f1After: number;
  /** Whether the answers placed the bar within reach (otherwise the offset is 0). */
  placed: boolean;
}

/** Weighted F1 of "link when margin >= offset". */
export function decisionF1(items: readonly FitItem[], offset: number): number {
  let tp = 0;
  let fp = 0;
  let fn = 0;
  for (const i of items) {
    const link = i.margin >= offset;
    if (link && i.same) tp += i.weight;
    else if (link) fp += i.weight;
    else if (i.same) fn += i.weight;
  }
  return tp === 0 ? 0 : (2 * tp) / (2 * tp + fp + fn);
}

/** Weighted logistic regression of `same` on the margin (Newton's method); [a, b]. */
export function fitLogistic(items: readonly FitItem[], iterations = 50): [number, number] {
  let a = 0;
  let b = 0;
  for (let it = 0; it < iterations; it++) {
    // Gradient and Hessian of the weighted log-likelihood, with a small ridge on b for separable answers.
    let ga = 0;
    let gb = -1e-3 * b;
    let haa = 1e-9;
    let hab = 0;
    let hbb = 1e-3;
    for (const i of items) {
      const p = 1 / (1 + Math.exp(-(a + b * i.margin)));
      const r = (i.same ? 1 : 0) - p;
      const w = i.weight * p * (1 - p);
      ga += i.weight * r;
      gb += i.weight * r * i.margin;
      haa += w;
      hab += w * i.margin;
      hbb += w * i.margin * i.margin;
    }
    const det = haa * hbb - hab * hab;
    if (det <= 0) break;
    const da = (hbb * ga - hab * gb) / det;
    const db = (haa * gb - hab * ga) / det;
    a += da;
    b += db;
    if (Math.abs(da) + Math.abs(db) < 1e-9) break;
  }
  return [a, b];
}

/** The offset where a link becomes the more likely, within ±maxShift (0 when the answers cannot tell). */
export function fitOffset(items: readonly FitItem[], maxShift = 0.15): OffsetFit {
  const before = decisionF1(items, 0);
  if (!items.some((i) => i.same) || !items.some((i) => !i.same)) return { offset: 0, f1Before: before, f1After: before, placed: false };
  const [a, b] = fitLogistic(items);
  const point = b > 0 ? -a / b : NaN;
  const offset = Number.isFinite(point) && Math.abs(point) <= maxShift ? point : 0;
  return { offset, f1Before: before, f1After: decisionF1(items, offset), placed: offset !== 0 || point === 0 };
}

/** k-fold cross-validation of the fit: mean held-out F1 at offset 0 and at each fold's fitted offset. */
export function crossValidate(
  items: readonly FitItem[],
  k = 5,
  seed = 1,
  maxShift = 0.15,
): { f1Before: number; f1After: number; folds: number } {
  const rnd = seededRandom(seed);
  const order = items.map((item) => ({ item, key: rnd() }));
  order.sort((a, b) => a.key - b.key);
  const folds = Math.min(k, items.length);
  let before = 0;
  let after = 0;
  for (let f = 0; f < folds; f++) {
    const held = order.filter((_, i) => i % folds === f).map((x) => x.item);
    const train = order.filter((_, i) => i % folds !== f).map((x) => x.item);
    const { offset } = fitOffset(train, maxShift);
    before += decisionF1(held, 0) / folds;
    after += decisionF1(held, offset) / folds;
  }
  return { f1Before: before, f1After: after, folds };
}

/** The fit, and the move suggested: the fit's offset when held-out answers bear it out (cross-validated F1 rises), else none. */
export interface OffsetSuggestion extends OffsetFit {
  cvF1Before: number;
  cvF1After: number;
  /** Whether held-out answers bear the move out; `offset` is 0 when they do not. */
  validated: boolean;
  /** The fit's own offset, suggested or not. */
  fitted: number;
}

export function suggestOffset(items: readonly FitItem[], seed: number, k = 5, maxShift = 0.15): OffsetSuggestion {
  const fit = fitOffset(items, maxShift);
  const cv = crossValidate(items, k, seed, maxShift);
  const validated = fit.offset !== 0 && cv.f1After > cv.f1Before;
  return {
    ...fit,
    offset: validated ? fit.offset : 0,
    f1After: validated ? fit.f1After : fit.f1Before,
    fitted: fit.offset,
    cvF1Before: cv.f1Before,
    cvF1After: cv.f1After,
    validated,
  };
}
