/**
 * Precision and recall of the linker's decisions estimated from a stratified sample of
 * reviewed candidates (sampling.ts), with 95 % intervals.
 *
 * In stratum h of N_h candidates, n_h answered and x_h judged "same event", the number of
 * right decisions of that kind is estimated as N_h x_h / n_h (the stratified estimator of a
 * total), with variance N_h^2 s_h^2 / n_h (no finite-population correction, below). True links TP are summed over the
 * link strata, missed links FN over the miss strata; precision = TP / (links made),
 * recall = TP / (TP + FN), its variance by the delta method (TP and FN come from disjoint
 * strata, so they are independent). For the variance only, a stratum's share is taken as
 * (x + 1) / (n + 2), so that a stratum where every answer agreed does not claim no
 * uncertainty at all. Intervals are normal (1.96 standard errors), kept within [0, 1].
 * Consolidation's merges are another kind of decision: their precision is estimated from
 * their own stratum and counts in neither of the links' figures.
 */
import { STRATA, type Stratum, type StratumDesign } from './sampling.js';

/** A reviewed candidate: its stratum and the combined answer (true: same event). */
export interface ReviewedItem {
  stratum: Stratum;
  same: boolean;
}

export interface Estimate {
  value: number;
  low: number;
  high: number;
  /** Answers it rests on. */
  answers: number;
}

const LINK_STRATA: ReadonlySet<Stratum> = new Set(['near-bar', 'confident', 'cross-story', 'conflicting-names']);
const MISS_STRATA: ReadonlySet<Stratum> = new Set(['near-miss', 'far-miss']);
const Z = 1.96;

function interval(value: number, variance: number, answers: number): Estimate {
  const se = Math.sqrt(Math.max(0, variance));
  return { value, low: Math.max(0, value - Z * se), high: Math.min(1, value + Z * se), answers };
}

/** A stratum's estimated total of "same" and its variance. */
function total(population: number, answers: readonly ReviewedItem[]): { total: number; variance: number } {
  const n = answers.length;
  if (population === 0) return { total: 0, variance: 0 };
  if (n === 0) return { total: NaN, variance: NaN };
  const x = answers.filter((a) => a.same).length;
  const shared = (x + 1) / (n + 2);
  const s2 = n > 1 ? (shared * (1 - shared) * n) / (n - 1) : shared * (1 - shared);
  // No finite-population correction: answers carry reviewers' slips, so even a stratum
  // reviewed whole is not known exactly; the sampling variance stands in for both.
  return { total: (population * x) / n, variance: (population ** 2 * s2) / n };
}

/** Precision and recall from the design and the reviewed items (unsure answers left out before). */
export function estimateQuality(
  design: readonly StratumDesign[],
  items: readonly ReviewedItem[],
): { precision: Estimate; recall: Estimate; merges: Estimate } {
  let tp = 0;
  let tpVar = 0;
  let fn = 0;
  let fnVar = 0;
  let links = 0;
  for (const s of STRATA) {
    const d = design.find((x) => x.stratum === s);
    if (!d) continue;
    const t = total(
      d.population,
      items.filter((i) => i.stratum === s),
    );
    if (LINK_STRATA.has(s)) {
      links += d.population;
      tp += t.total;
      tpVar += t.variance;
    } else if (MISS_STRATA.has(s)) {
      fn += t.total;
      fnVar += t.variance;
    }
  }
  const answered = (set: (s: Stratum) => boolean) => items.filter((i) => set(i.stratum)).length;
  const precision = interval(
    links ? tp / links : NaN,
    links ? tpVar / links ** 2 : NaN,
    answered((s) => LINK_STRATA.has(s)),
  );
  const found = tp + fn;
  const recall = interval(
    found ? tp / found : NaN,
    found ? (fn ** 2 * tpVar + tp ** 2 * fnVar) / found ** 4 : NaN,
    answered((s) => LINK_STRATA.has(s) || MISS_STRATA.has(s)),
  );
  const merged = design.find((x) => x.stratum === 'merge')?.population ?? 0;
  const m = total(
    merged,
    items.filter((i) => i.stratum === 'merge'),
  );
  const merges = interval(
    merged ? m.total / merged : NaN,
    merged ? m.variance / merged ** 2 : NaN,
    answered((s) => s === 'merge'),
  );
  return { precision, recall, merges };
}
