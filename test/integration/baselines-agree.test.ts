import { beforeAll, describe, expect, it } from 'vitest';
import { DEMO_DIR } from '../../src/cli/common.js';
import { type Clustering, averageLinkDendrogram, lexicalOverlap, onlineCentroid } from '../../src/eval/baselines.js';
import { demoEvalInput } from '../../src/eval/demo-input.js';
import { baselineMentions, detectArticles, selector, toArticles } from '../../src/eval/prepare-mentions.js';
import { createEmbedder } from '../../src/embed/create-embedder.js';
import type { EmbeddedMention } from '../../src/records.js';
import { createNlp } from '../../src/text/nlp.js';
import { batchAverageLinkByPairs, lexicalOverlapByPairs, onlineCentroidByScan } from '../helpers/reference-baselines.js';
import { testConfig } from '../helpers/runtime.js';

/** A clustering as its groups of keys, independent of how the groups are named. */
const groups = (c: Clustering): string[][] => {
  const by = new Map<string, string[]>();
  for (const [k, v] of c) by.set(v[0]!, [...(by.get(v[0]!) ?? []), k]);
  return [...by.values()].map((x) => x.sort()).sort((a, b) => a[0]!.localeCompare(b[0]!));
};

describe('the index-based baselines give the answers of the all-pairs versions', () => {
  let byArticle: EmbeddedMention[][];
  beforeAll(async () => {
    const config = testConfig();
    const input = await demoEvalInput(createNlp(), DEMO_DIR, config);
    const detected = await detectArticles(
      createNlp(),
      toArticles(input, 'demo', '2026-01-01T00:00:00.000Z'),
      selector(input, 'predicted'),
      config,
      await createEmbedder(config.embed),
    );
    byArticle = baselineMentions(detected, config.embed.hashBits);
  });

  it('lexical overlap, on every demo mention', () => {
    const flat = byArticle.flat();
    expect(flat.length).toBeGreaterThan(300);
    expect(groups(lexicalOverlap(flat))).toEqual(groups(lexicalOverlapByPairs(flat)));
  });

  it.each([0.1, 0.2, 0.3, 0.45])('the online centroid at threshold %s', (t) => {
    expect(groups(onlineCentroid(byArticle, t, 7))).toEqual(groups(onlineCentroidByScan(byArticle, t, 7)));
  });

  it('batch average-link, one dendrogram cut at several thresholds', () => {
    const flat = byArticle.flat();
    const dendrogram = averageLinkDendrogram(flat, 7);
    for (const t of [0.1, 0.2, 0.3, 0.45])
      expect(groups(dendrogram.cut(t)), `at ${t}`).toEqual(groups(batchAverageLinkByPairs(flat, t, 7)));
  });
});
