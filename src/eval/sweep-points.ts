/**
 * Which thresholds the linker runs at in the default ('refine') sweep: every third one
 * first, then the neighbours of the best point by each score until each best has had both
 * its neighbours run. On a single-peaked curve that ends at the peak, in about 11 of 19
 * link runs instead of 19.
 */

/** The first pass: every third threshold, and the last. */
export function coarsePoints(thresholds: readonly number[]): number[] {
  return thresholds.filter((_, i) => i % 3 === 0 || i === thresholds.length - 1);
}

/**
 * The thresholds to run next: the neighbours, not yet run, of the best run point by each
 * score (the lower threshold on a tie); none once every best's neighbours have run.
 * `scores` holds, per run point, one value per score.
 */
export function pointsToRefine(thresholds: readonly number[], scores: ReadonlyMap<number, readonly number[]>): number[] {
  const ran = thresholds.filter((t) => scores.has(t));
  if (ran.length === 0) return [];
  const width = scores.get(ran[0]!)!.length;
  const out = new Set<number>();
  for (let k = 0; k < width; k++) {
    const best = ran.reduce((x, y) => (scores.get(y)![k]! > scores.get(x)![k]! ? y : x));
    const i = thresholds.indexOf(best);
    for (const t of [thresholds[i - 1], thresholds[i + 1]]) if (t !== undefined && !scores.has(t)) out.add(t);
  }
  return [...out];
}
