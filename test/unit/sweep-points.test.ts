import { describe, expect, it } from 'vitest';
import { coarsePoints, pointsToRefine } from '../../src/eval/sweep-points.js';

const GRID = Array.from({ length: 19 }, (_, i) => Math.round((0.05 + i * 0.025) * 1000) / 1000);

/** Runs the refined sweep on known curves; returns the points run and the best found per curve. */
function sweep(curves: ((t: number) => number)[]): { ran: number[]; best: number[] } {
  const scores = new Map<number, number[]>();
  const run = (ts: readonly number[]) =>
    ts.forEach((t) =>
      scores.set(
        t,
        curves.map((f) => f(t)),
      ),
    );
  run(coarsePoints(GRID));
  for (let next = pointsToRefine(GRID, scores); next.length > 0; next = pointsToRefine(GRID, scores)) run(next);
  const ran = [...scores.keys()].sort((a, b) => a - b);
  const best = curves.map((_, k) => ran.reduce((x, y) => (scores.get(y)![k]! > scores.get(x)![k]! ? y : x)));
  return { ran, best };
}

describe('the refined threshold sweep', () => {
  it('starts from every third threshold and the last', () => {
    expect(coarsePoints(GRID)).toEqual([0.05, 0.125, 0.2, 0.275, 0.35, 0.425, 0.5]);
  });

  it.each(GRID)('finds the peak of a single-peaked curve peaking at %s, with fewer runs than the grid', (peak) => {
    const { ran, best } = sweep([(t) => -Math.abs(t - peak), (t) => -((t - 0.3) ** 2)]);
    expect(best[0]).toBe(peak);
    expect(best[1]).toBe(0.3);
    expect(ran.length).toBeLessThanOrEqual(13);
  });

  it('stops once the best point has both neighbours run', () => {
    const scores = new Map<number, number[]>([
      [0.2, [0.5]],
      [0.175, [0.4]],
      [0.225, [0.45]],
    ]);
    expect(pointsToRefine(GRID, scores)).toEqual([]);
  });

  it('asks only for neighbours not yet run, once each, and nothing at the ends of the grid', () => {
    const scores = new Map<number, number[]>([
      [0.05, [0.9, 0.1]],
      [0.5, [0.1, 0.9]],
    ]);
    expect(pointsToRefine(GRID, scores).sort()).toEqual([0.075, 0.475]);
  });
});
