import { describe, expect, it } from 'vitest';
import { crossValidate, decisionF1, fitOffset, type FitItem, suggestOffset } from '../../src/review/calibrate.js';
import { estimateQuality, shareInterval } from '../../src/review/estimate.js';
import { allocate, drawSample, type ReviewCandidate, stratumOf } from '../../src/review/sampling.js';
import { seededRandom } from '../../src/seeded-random.js';

/** A synthetic population: candidates by stratum with a known share of right decisions. */
function population(seed: number) {
  const rnd = seededRandom(seed);
  const truth = new Map<string, boolean>();
  const candidates: ReviewCandidate[] = [];
  const add = (
    n: number,
    linked: boolean,
    margin: () => number,
    crossStory: boolean,
    pSame: number,
    extra: Partial<ReviewCandidate> = {},
  ) => {
    for (let i = 0; i < n; i++) {
      const c: ReviewCandidate = {
        ...extra,
        articleId: `a${candidates.length}`,
        sentenceIndex: 0,
        eventId: `e${candidates.length}`,
        linked,
        score: 0.3 + margin(),
        bar: 0.3,
        crossStory,
        outlet: 'Outlet',
        published: '2026-10-01T00:00:00Z',
      };
      candidates.push(c);
      truth.set(c.articleId, rnd() < pSame);
    }
  };
  add(400, true, () => rnd() * 0.1, false, 0.7); // near the bar
  add(3000, true, () => 0.1 + rnd() * 0.5, false, 0.97); // confident
  add(60, true, () => rnd() * 0.4, true, 0.5); // across stories
  add(500, false, () => -rnd() * 0.1, false, 0.2); // near misses
  add(2000, false, () => -0.1 - rnd() * 0.3, false, 0.02); // far misses
  add(150, true, () => rnd() * 0.3, false, 0.45, { conflictingNames: true }); // names apart
  add(80, true, () => 0, false, 0.8, { mergedFrom: 'ev_absorbed' }); // consolidation's merges
  add(100, true, () => 0, false, 0.45, { refersBack: true }); // back-references
  const isLink = (c: ReviewCandidate) => c.linked && !c.mergedFrom && !c.refersBack;
  const tp = candidates.filter((c) => isLink(c) && truth.get(c.articleId)).length;
  const links = candidates.filter(isLink).length;
  const fn = candidates.filter((c) => !c.linked && truth.get(c.articleId)).length;
  const merges = candidates.filter((c) => c.mergedFrom);
  const mergesRight = merges.filter((c) => truth.get(c.articleId)).length / merges.length;
  const backs = candidates.filter((c) => c.refersBack);
  const backsRight = backs.filter((c) => truth.get(c.articleId)).length / backs.length;
  return { candidates, truth, precision: tp / links, recall: tp / (tp + fn), mergesRight, backsRight };
}

describe('the review sample and its estimates', () => {
  it('allocates equally over the strata, passing on what a small stratum lacks', () => {
    const sizes = new Map([
      ['near-bar', 100],
      ['confident', 1000],
      ['cross-story', 5],
      ['near-miss', 100],
      ['far-miss', 0],
    ] as const);
    const take = allocate(sizes, 100);
    expect([...take.values()].reduce((a, b) => a + b, 0)).toBe(100);
    expect(take.get('cross-story')).toBe(5);
    expect(take.get('far-miss')).toBe(0);
    expect(Math.min(take.get('near-bar')!, take.get('confident')!, take.get('near-miss')!)).toBeGreaterThanOrEqual(31);
  });

  it('puts each decision in its stratum by its margin and kind', () => {
    const c = { articleId: 'a', sentenceIndex: 0, eventId: 'e', crossStory: false, outlet: 'o', published: '' };
    expect(stratumOf({ ...c, linked: true, score: 0.35, bar: 0.3 }, 0.1)).toBe('near-bar');
    expect(stratumOf({ ...c, linked: true, score: 0.6, bar: 0.3 }, 0.1)).toBe('confident');
    expect(stratumOf({ ...c, linked: true, score: 0.6, bar: 0.3, crossStory: true }, 0.1)).toBe('cross-story');
    expect(stratumOf({ ...c, linked: false, score: 0.25, bar: 0.3 }, 0.1)).toBe('near-miss');
    expect(stratumOf({ ...c, linked: false, score: 0.05, bar: 0.3 }, 0.1)).toBe('far-miss');
    expect(stratumOf({ ...c, linked: true, score: 0.6, bar: 0.3, conflictingNames: true }, 0.1)).toBe('conflicting-names');
    // Across stories comes first: a link there is asked about as one.
    expect(stratumOf({ ...c, linked: true, score: 0.6, bar: 0.3, crossStory: true, conflictingNames: true }, 0.1)).toBe('cross-story');
    expect(stratumOf({ ...c, linked: true, score: 0.45, bar: 0.45, mergedFrom: 'ev_x' }, 0.1)).toBe('merge');
  });

  it('draws the same sample for the same seed, and records the design', () => {
    const { candidates } = population(3);
    const a = drawSample(candidates, 300, { seed: 7 });
    const b = drawSample(candidates, 300, { seed: 7 });
    expect(a.items.map((i) => i.articleId)).toEqual(b.items.map((i) => i.articleId));
    expect(a.items).toHaveLength(300);
    expect(a.design.map((d) => [d.stratum, d.population])).toEqual([
      ['near-bar', 400],
      ['confident', 3000],
      ['cross-story', 60],
      ['near-miss', 500],
      ['far-miss', 2000],
      ['conflicting-names', 150],
      ['merge', 80],
      ['back-reference', 100],
    ]);
    expect(new Set(a.items.map((i) => i.articleId)).size).toBe(300);
  });

  it('states 95 % intervals for precision, recall, merges and back-references that hold the true values in at least 9 runs of 10 (200 seeded runs)', () => {
    let precisionHits = 0;
    let recallHits = 0;
    let mergeHits = 0;
    let backHits = 0;
    const runs = 200;
    for (let seed = 1; seed <= runs; seed++) {
      const { candidates, truth, precision, recall, mergesRight, backsRight } = population(seed);
      const sample = drawSample(candidates, 300, { seed: seed * 31 });
      const est = estimateQuality(
        sample.design,
        sample.items.map((i) => ({ stratum: i.stratum, same: truth.get(i.articleId)! })),
      );
      if (est.precision.low <= precision && precision <= est.precision.high) precisionHits++;
      if (est.recall.low <= recall && recall <= est.recall.high) recallHits++;
      if (est.merges.low <= mergesRight && mergesRight <= est.merges.high) mergeHits++;
      if (est.backReferences.low <= backsRight && backsRight <= est.backReferences.high) backHits++;
    }
    expect(precisionHits / runs).toBeGreaterThanOrEqual(0.9);
    expect(recallHits / runs).toBeGreaterThanOrEqual(0.9);
    // Merges and back-references are estimated apart, each from its own stratum.
    expect(mergeHits / runs).toBeGreaterThanOrEqual(0.9);
    expect(backHits / runs).toBeGreaterThanOrEqual(0.9);
  });
});

describe('the interval of a share', () => {
  it('is normal on the logit scale: inside (0, 1), leaning away from the nearer bound', () => {
    // p = 0.9 with a standard error of 0.03 (0.9 of 100 answers): logit 2.197 ± 1.96 x 0.333,
    // worked by hand from the logit interval's formula.
    const e = shareInterval(0.9, 0.03 ** 2, 100);
    expect(e.low).toBeCloseTo(0.824, 3);
    expect(e.high).toBeCloseTo(0.9453, 3);
    expect(0.9 - e.low).toBeGreaterThan(e.high - 0.9);
    // Symmetric at one half.
    const half = shareInterval(0.5, 0.1 ** 2, 25);
    expect(half.low + half.high).toBeCloseTo(1, 12);
    // At a bound the logit is undefined: the clipped normal interval stands.
    expect(shareInterval(1, 0.01, 10)).toMatchObject({ low: 1 - 1.96 * 0.1, high: 1 });
  });
});

describe('fitting the threshold to reviewed decisions', () => {
  /** Decisions whose truth flips at `cut`: right links above it, wrong ones below. */
  const items = (cut: number, seed: number): FitItem[] => {
    const rnd = seededRandom(seed);
    return Array.from({ length: 400 }, () => {
      const margin = rnd() * 0.6 - 0.3;
      // 10 % of answers flipped, as a reviewer's slips would.
      const same = margin >= cut !== rnd() < 0.1;
      return { margin, same, weight: 1 };
    });
  };

  it('moves the threshold to where the answers change, and helps answers it did not see', () => {
    const fit = fitOffset(items(0.06, 1));
    expect(fit.offset).toBeGreaterThan(0.03);
    expect(fit.offset).toBeLessThan(0.09);
    expect(fit.f1After).toBeGreaterThan(fit.f1Before);
    const cv = crossValidate(items(0.06, 2));
    expect(cv.f1After).toBeGreaterThan(cv.f1Before);
  });

  it('keeps the threshold when the answers agree with it, and never moves it beyond the allowed shift', () => {
    expect(Math.abs(fitOffset(items(0, 3)).offset)).toBeLessThan(0.03);
    expect(Math.abs(fitOffset(items(0.4, 4), 0.15).offset)).toBeLessThanOrEqual(0.15);
    expect(fitOffset([{ margin: 0.2, same: true, weight: 1 }]).offset).toBe(0);
    // Right half the time whatever the score (alike reports of different happenings): the answers do not place the bar.
    const rnd = seededRandom(5);
    const flat = Array.from({ length: 400 }, () => ({ margin: rnd() * 0.8, same: rnd() < 0.5, weight: 1 }));
    expect(fitOffset(flat)).toMatchObject({ offset: 0, placed: false });
    expect(decisionF1([{ margin: 0.1, same: false, weight: 1 }], 0)).toBe(0);
  });

  it('suggests a move only when answers the fit did not see bear it out', () => {
    const sharp = suggestOffset(items(0.06, 1), 1);
    expect(sharp).toMatchObject({ validated: true, placed: true });
    expect(sharp.offset).toBe(sharp.fitted);
    expect(sharp.cvF1After).toBeGreaterThan(sharp.cvF1Before);
    // A weak trend: the fit places a point, but held-out answers do worse with it.
    const rnd = seededRandom(1);
    const weak = Array.from({ length: 200 }, () => {
      const margin = rnd() * 0.4 - 0.2;
      return { margin, same: rnd() < 0.45 + margin * 0.3, weight: 1 };
    });
    const s = suggestOffset(weak, 1);
    expect(s.placed).toBe(true);
    expect(s.fitted).not.toBe(0);
    expect(s.cvF1After).toBeLessThanOrEqual(s.cvF1Before);
    expect(s).toMatchObject({ validated: false, offset: 0 });
    expect(s.f1After).toBe(s.f1Before);
  });
});
