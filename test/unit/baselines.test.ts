import { describe, expect, it } from 'vitest';
import { allSingletons, batchAverageLink, dot, lexicalOverlap, onePerSubtopic, onlineCentroid } from '../../src/eval/baselines.js';
import type { EmbeddedMention } from '../../src/records.js';

function mention(article: string, terms: string[], vector: number[], published = '2026-10-05T12:00:00Z'): EmbeddedMention {
  const norm = Math.hypot(...vector) || 1;
  const indices = vector.map((_, i) => i).filter((i) => vector[i] !== 0);
  return {
    articleId: article,
    sentenceIndex: 0,
    text: terms.join(' '),
    outlet: 'O',
    published,
    eventness: 1,
    participants: [],
    places: [],
    times: [],
    terms,
    isCopy: false,
    vector: { kind: 'sparse', indices: Uint32Array.from(indices), values: Float32Array.from(indices.map((i) => vector[i]! / norm)) },
  };
}

/** Average-link clustering by its definition: repeatedly merge the two clusters with the highest mean pairwise similarity. */
function naiveAverageLink(ms: EmbeddedMention[], threshold: number): string[][] {
  let clusters = ms.map((_, i) => [i]);
  for (;;) {
    let best = -Infinity;
    let pair: [number, number] = [-1, -1];
    for (let a = 0; a < clusters.length; a++) {
      for (let b = a + 1; b < clusters.length; b++) {
        let s = 0;
        for (const i of clusters[a]!) for (const j of clusters[b]!) s += dot(ms[i]!.vector, ms[j]!.vector);
        s /= clusters[a]!.length * clusters[b]!.length;
        if (s > best) {
          best = s;
          pair = [a, b];
        }
      }
    }
    if (pair[0] < 0 || best < threshold) break;
    clusters = [...clusters.filter((_, k) => k !== pair[0] && k !== pair[1]), [...clusters[pair[0]]!, ...clusters[pair[1]]!]];
  }
  return clusters.map((c) => c.map((i) => ms[i]!.articleId).sort()).sort();
}

const groups = (c: Map<string, string[]>): string[][] => {
  const by = new Map<string, string[]>();
  for (const [k, v] of c) by.set(v[0]!, [...(by.get(v[0]!) ?? []), k.split('#')[0]!]);
  return [...by.values()].map((x) => x.sort()).sort();
};

describe('baselines', () => {
  const ms = [
    mention('a', ['levee', 'breach', 'town'], [1, 1, 0, 0]),
    mention('b', ['levee', 'breach', 'river'], [1, 0.9, 0.1, 0]),
    mention('c', ['strike', 'port', 'walk'], [0, 0, 1, 1]),
    mention('d', ['strike', 'dock'], [0, 0.1, 1, 0.8]),
  ];

  it('puts every mention alone', () => {
    expect(groups(allSingletons(ms))).toEqual([['a'], ['b'], ['c'], ['d']]);
  });

  it('groups by subtopic', () => {
    expect(groups(onePerSubtopic(ms, (id) => (id < 'c' ? 'floods' : 'labour')))).toEqual([
      ['a', 'b'],
      ['c', 'd'],
    ]);
  });

  it('links a shared event word with enough word overlap, transitively', () => {
    const chain = [
      mention('a', ['strike', 'port', 'vellmouth'], [1]),
      mention('b', ['strike', 'port', 'guild'], [1]),
      mention('c', ['strike', 'guild', 'plan'], [1]),
      mention('d', ['budget', 'plan', 'guild'], [1]),
    ];
    // a-b share "strike" (an event word) and 2 of 4 words; b-c share "strike" and 2 of 4;
    // c-d share 2 of 4 words but no event word; so {a b c} {d}.
    expect(groups(lexicalOverlap(chain))).toEqual([['a', 'b', 'c'], ['d']]);
  });

  it('clusters online against centroids with a threshold', () => {
    expect(groups(onlineCentroid([ms.slice(0, 2), ms.slice(2)], 0.5, 7))).toEqual([
      ['a', 'b'],
      ['c', 'd'],
    ]);
  });

  it('halves similarity one half-life apart in the online baseline', () => {
    const far = [mention('a', ['x'], [1, 0]), mention('b', ['x'], [1, 0], '2026-10-12T12:00:00Z')];
    expect(groups(onlineCentroid([[far[0]!], [far[1]!]], 0.6, 7))).toEqual([['a'], ['b']]);
    expect(groups(onlineCentroid([[far[0]!], [far[1]!]], 0.4, 7))).toEqual([['a', 'b']]);
  });

  it('builds the same average-link clusters as the definition, on random inputs', () => {
    let seed = 11;
    const rand = () => (seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648;
    for (let t = 0; t < 40; t++) {
      const n = 2 + Math.floor(rand() * 9);
      const set = Array.from({ length: n }, (_, i) =>
        mention(
          `m${String(i).padStart(2, '0')}`,
          [],
          Array.from({ length: 5 }, () => (rand() < 0.5 ? 0 : rand())),
        ),
      );
      const threshold = 0.2 + rand() * 0.5;
      expect(groups(batchAverageLink(set, threshold, 1e9))).toEqual(naiveAverageLink(set, threshold));
    }
  });
});
