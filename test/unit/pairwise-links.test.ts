import { describe, expect, it } from 'vitest';
import { pairwiseLinkScores } from '../../src/eval/pairwise-links.js';

const set = (...xs: string[]) => new Set(xs);

describe('pairwise link scores', () => {
  // Worked example, counted by hand. Gold: {a1#0, a1#1, a2#0} are event X, a3#0 is event Y.
  // Gold links: (a1#0,a1#1) within article, (a1#0,a2#0) and (a1#1,a2#0) across articles: 3.
  // System: {a1#0, a2#0, a3#0} share event S, a1#1 alone.
  // System links: (a1#0,a2#0), (a1#0,a3#0), (a2#0,a3#0): 3, of which (a1#0,a2#0) agrees.
  // Precision 1/3, recall 1/3; within article: gold 1, system 0; across: gold 2, system 3, agreed 1.
  const gold = new Map([['a1#0', set('X')], ['a1#1', set('X')], ['a2#0', set('X')], ['a3#0', set('Y')]]);
  const sys = new Map([['a1#0', set('S')], ['a1#1', set('T')], ['a2#0', set('S')], ['a3#0', set('S')]]);
  const r = pairwiseLinkScores(gold, sys, (k) => k.split('#')[0]!, (a) => (a === 'a3' ? 'story-2' : 'story-1'));

  it('scores all pairs', () => {
    expect(r.all).toMatchObject({ goldPairs: 3, systemPairs: 3, agreedPairs: 1 });
    expect(r.all.precision).toBeCloseTo(1 / 3, 12);
    expect(r.all.recall).toBeCloseTo(1 / 3, 12);
  });

  it('splits pairs within and across articles and stories', () => {
    expect(r.withinArticle).toMatchObject({ goldPairs: 1, systemPairs: 0, agreedPairs: 0 });
    expect(r.crossArticle).toMatchObject({ goldPairs: 2, systemPairs: 3, agreedPairs: 1 });
    expect(r.sameStory).toMatchObject({ goldPairs: 2, systemPairs: 1, agreedPairs: 1 });
    expect(r.crossStory).toMatchObject({ goldPairs: 0, systemPairs: 2, agreedPairs: 0 });
  });

  it('counts links to sentences only the system holds as false links', () => {
    const g = new Map([['a#0', set('X')], ['b#0', set('X')]]);
    const s = new Map([['a#0', set('S')], ['b#0', set('S')], ['c#0', set('S')]]);
    expect(pairwiseLinkScores(g, s, (k) => k.split('#')[0]!).all).toMatchObject({ goldPairs: 1, systemPairs: 3, agreedPairs: 1 });
  });

  it('counts a pair as linked when the two sentences share any one of several events', () => {
    const g = new Map([['a#0', set('X', 'Y')], ['b#0', set('Y')]]);
    expect(pairwiseLinkScores(g, g, (k) => k.split('#')[0]!).all).toMatchObject({ precision: 1, recall: 1, f1: 1 });
  });
});
