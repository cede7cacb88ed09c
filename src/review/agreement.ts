/**
 * Krippendorff's alpha: agreement among reviewers beyond chance, for any number of
 * reviewers, with missing answers (Krippendorff, "Computing Krippendorff's
 * Alpha-Reliability", 2011). Computed from the coincidence matrix: within each unit judged
 * by m >= 2 reviewers, every ordered pair of values counts 1 / (m - 1).
 *
 *   alpha = 1 - (n - 1) * sum_ck o_ck d2(c, k) / sum_ck n_c n_k d2(c, k)
 *
 * where o_ck are the coincidences, n_c their margins and n the number of pairable values.
 */

/** How far apart two values are: nominal (same or not) or interval (squared difference). */
export type AlphaLevel = 'nominal' | 'interval';

/** One unit's answers, one per reviewer; null where that reviewer gave none. */
export type Unit = readonly (number | string | null)[];

const distance = (level: AlphaLevel, a: number | string, b: number | string): number =>
  level === 'nominal' ? (a === b ? 0 : 1) : (Number(a) - Number(b)) ** 2;

/**
 * Alpha over units (each an array of answers by reviewer, null for none). NaN when fewer
 * than two pairable values exist or every value is the same (no disagreement is possible).
 */
export function krippendorffAlpha(units: readonly Unit[], level: AlphaLevel = 'nominal'): number {
  const coincidences = new Map<number | string, Map<number | string, number>>();
  const add = (c: number | string, k: number | string, w: number) => {
    const row = coincidences.get(c) ?? coincidences.set(c, new Map()).get(c)!;
    row.set(k, (row.get(k) ?? 0) + w);
  };
  for (const unit of units) {
    const values = unit.filter((v): v is number | string => v !== null);
    const m = values.length;
    if (m < 2) continue;
    for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) if (i !== j) add(values[i]!, values[j]!, 1 / (m - 1));
  }
  const margins = new Map<number | string, number>();
  for (const [c, row] of coincidences)
    margins.set(
      c,
      [...row.values()].reduce((s, x) => s + x, 0),
    );
  const n = [...margins.values()].reduce((s, x) => s + x, 0);
  let observed = 0;
  for (const [c, row] of coincidences) for (const [k, o] of row) observed += o * distance(level, c, k);
  let expected = 0;
  for (const [c, nc] of margins) for (const [k, nk] of margins) expected += nc * nk * distance(level, c, k);
  if (n < 2 || expected === 0) return NaN;
  return 1 - ((n - 1) * observed) / expected;
}
