import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { pairwiseLinkScores } from '../../src/eval/pairwise-links.js';

const set = (...xs: string[]) => new Set(xs);

describe('pairwise link scores', () => {
  // Worked example, counted by hand. Gold: {a1#0, a1#1, a2#0} are event X, a3#0 is event Y.
  // Gold links: (a1#0,a1#1) within article, (a1#0,a2#0) and (a1#1,a2#0) across articles: 3.
  // System: {a1#0, a2#0, a3#0} share event S, a1#1 alone.
  // System links: (a1#0,a2#0), (a1#0,a3#0), (a2#0,a3#0): 3, of which (a1#0,a2#0) agrees.
  // Precision 1/3, recall 1/3; within article: gold 1, system 0; across: gold 2, system 3, agreed 1.
  const gold = new Map([
    ['a1#0', set('X')],
    ['a1#1', set('X')],
    ['a2#0', set('X')],
    ['a3#0', set('Y')],
  ]);
  const sys = new Map([
    ['a1#0', set('S')],
    ['a1#1', set('T')],
    ['a2#0', set('S')],
    ['a3#0', set('S')],
  ]);
  const r = pairwiseLinkScores(
    gold,
    sys,
    (k) => k.split('#')[0]!,
    (a) => (a === 'a3' ? 'story-2' : 'story-1'),
  );

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
    const g = new Map([
      ['a#0', set('X')],
      ['b#0', set('X')],
    ]);
    const s = new Map([
      ['a#0', set('S')],
      ['b#0', set('S')],
      ['c#0', set('S')],
    ]);
    expect(pairwiseLinkScores(g, s, (k) => k.split('#')[0]!).all).toMatchObject({ goldPairs: 1, systemPairs: 3, agreedPairs: 1 });
  });

  it('counts a pair as linked when the two sentences share any one of several events', () => {
    const g = new Map([
      ['a#0', set('X', 'Y')],
      ['b#0', set('Y')],
    ]);
    expect(pairwiseLinkScores(g, g, (k) => k.split('#')[0]!).all).toMatchObject({ precision: 1, recall: 1, f1: 1 });
  });
});

/** Every pair tried, as the definition reads: the reference the counting must equal. */
function everyPair(
  gold: Map<string, Set<string>>,
  sys: Map<string, Set<string>>,
  articleOf: (k: string) => string,
  storyOf: (a: string) => string | null,
) {
  const keys = [...new Set([...gold.keys(), ...sys.keys()])];
  const counts: Record<string, [number, number, number]> = {
    all: [0, 0, 0],
    withinArticle: [0, 0, 0],
    crossArticle: [0, 0, 0],
    sameStory: [0, 0, 0],
    crossStory: [0, 0, 0],
  };
  const share = (x?: Set<string>, y?: Set<string>) => !!x && !!y && [...x].some((e) => y.has(e));
  for (let i = 0; i < keys.length; i++) {
    for (let j = i + 1; j < keys.length; j++) {
      const [a, b] = [keys[i]!, keys[j]!];
      const g = share(gold.get(a), gold.get(b));
      const s = share(sys.get(a), sys.get(b));
      const [x, y] = [articleOf(a), articleOf(b)];
      const kinds = ['all', x === y ? 'withinArticle' : 'crossArticle'];
      if (x !== y && storyOf(x) && storyOf(y)) kinds.push(storyOf(x) === storyOf(y) ? 'sameStory' : 'crossStory');
      for (const k of kinds) counts[k] = [counts[k]![0] + (g ? 1 : 0), counts[k]![1] + (s ? 1 : 0), counts[k]![2] + (g && s ? 1 : 0)];
    }
  }
  return counts;
}

describe('pairwise link scores, counted rather than visited', () => {
  it('equal trying every pair, on random assignments with several events per sentence and sentences only one side holds', () => {
    const arbitrary = fc.record({
      gold: fc.array(fc.tuple(fc.integer({ min: 0, max: 30 }), fc.array(fc.integer({ min: 0, max: 6 }), { maxLength: 3 })), {
        maxLength: 40,
      }),
      sys: fc.array(fc.tuple(fc.integer({ min: 0, max: 30 }), fc.array(fc.integer({ min: 0, max: 6 }), { maxLength: 3 })), {
        maxLength: 40,
      }),
    });
    fc.assert(
      fc.property(arbitrary, ({ gold, sys }) => {
        // Sentence n sits in article n mod 7; articles 5 and 6 have no story.
        const key = (n: number) => `a${n % 7}#${n}`;
        const g = new Map(gold.map(([n, es]) => [key(n), new Set(es.map((e) => `G${e}`))]));
        const s = new Map(sys.map(([n, es]) => [key(n), new Set(es.map((e) => `S${e}`))]));
        const articleOf = (k: string) => k.split('#')[0]!;
        const storyOf = (a: string) => (['a5', 'a6'].includes(a) ? null : `t${Number(a.slice(1)) % 2}`);
        const got = pairwiseLinkScores(g, s, articleOf, storyOf);
        const want = everyPair(g, s, articleOf, storyOf);
        for (const [k, [gp, sp, both]] of Object.entries(want)) {
          expect(got[k as keyof typeof got]).toMatchObject({ goldPairs: gp, systemPairs: sp, agreedPairs: both });
        }
      }),
      { numRuns: 300 },
    );
  });
});
