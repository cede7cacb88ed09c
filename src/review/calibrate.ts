/**
 * Fitting the link decision to reviewed candidates: how far to move the link threshold.
 *
 * A reviewed candidate's margin is its score minus the bar it had to reach (negative for a
 * miss). Moving the threshold by `offset` moves every bar by it, so the decision becomes
 * "link when margin >= offset". The fit takes the offset that maximises the F1 of those
 * decisions against the reviewers' combined answers, each answer weighted by how many
 * candidates of its stratum it stands for (the sample's design), within `maxShift` of the
 * configured threshold; among equal fits, the smallest move. Cross-validation (k folds)
 * reports the F1 on answers the fit did not see, before and after, so that an operator
 * sees what applying it would change before applying it.
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

/** The offset within ±maxShift that fits the items best (0 when they cannot tell). */
export function fitOffset(items: readonly FitItem[], maxShift = 0.15): OffsetFit {
  const before = decisionF1(items, 0);
  if (!items.some((i) => i.same) || !items.some((i) => !i.same)) return { offset: 0, f1Before: before, f1After: before };
  const margins = [...new Set(items.map((i) => i.margin))].sort((a, b) => a - b);
  const cuts = [0];
  for (let k = 1; k < margins.length; k++) cuts.push((margins[k - 1]! + margins[k]!) / 2);
  let best = { offset: 0, f1: before };
  for (const c of cuts) {
    if (Math.abs(c) > maxShift) continue;
    const f1 = decisionF1(items, c);
    if (f1 > best.f1 + 1e-12 || (Math.abs(f1 - best.f1) <= 1e-12 && Math.abs(c) < Math.abs(best.offset))) best = { offset: c, f1 };
  }
  return { offset: best.offset, f1Before: before, f1After: best.f1 };
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
