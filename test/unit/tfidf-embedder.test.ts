import { describe, expect, it } from 'vitest';
import { TfidfEmbedder, fnv1a } from '../../src/embed/tfidf-embedder.js';

describe('FNV-1a hashing', () => {
  // Test vectors of the FNV reference (Fowler, Noll, Vo, "FNV test vectors", 32-bit FNV-1a; from memory).
  it.each([
    ['', 0x811c9dc5],
    ['a', 0xe40c292c],
    ['foobar', 0xbf9cf968],
  ])('hashes %j to the reference value', (s, h) => {
    expect(fnv1a(s)).toBe(h);
  });
});

describe('the TF-IDF embedder', () => {
  it('learns document frequencies from the stream and weighs rare terms up', async () => {
    const e = new TfidfEmbedder(16);
    e.learn([
      { text: '', terms: ['levee', 'river'] },
      { text: '', terms: ['river'] },
      { text: '', terms: ['river', 'bank'] },
    ]);
    // idf = ln((1 + N) / (1 + df)) + 1 with N = 3 (scikit-learn's smoothed idf).
    expect(e.idf(fnv1a('river') & 0xffff)).toBeCloseTo(Math.log(4 / 4) + 1, 10);
    expect(e.idf(fnv1a('levee') & 0xffff)).toBeCloseTo(Math.log(4 / 2) + 1, 10);
  });

  it('produces L2-normalised sparse vectors with sorted indices, unigrams only by default', async () => {
    const e = new TfidfEmbedder(16);
    e.learn([{ text: '', terms: ['a', 'b'] }]);
    const [v] = await e.embed([{ text: '', terms: ['a', 'b', 'a'] }]);
    expect(v!.kind).toBe('sparse');
    const values = [...v!.values];
    expect(Math.hypot(...values)).toBeCloseTo(1, 6);
    const idx = [...(v as { indices: Uint32Array }).indices];
    expect(idx).toEqual([...idx].sort((x, y) => x - y));
    expect(idx).toHaveLength(2);
  });

  it('adds hashed adjacent bigrams when asked', () => {
    // a, b, "a b", "b a": four distinct features.
    expect(new TfidfEmbedder(16, { bigrams: true }).vector(['a', 'b', 'a']).indices).toHaveLength(4);
  });

  it('raises idf to idfPower, weighing rare terms further up', () => {
    const plain = new TfidfEmbedder(16);
    const sharp = new TfidfEmbedder(16, { idfPower: 2 });
    const docs = [
      { text: '', terms: ['levee', 'river'] },
      { text: '', terms: ['river'] },
      { text: '', terms: ['river', 'bank'] },
    ];
    plain.learn(docs);
    sharp.learn(docs);
    const h = fnv1a('levee') & 0xffff;
    expect(sharp.idf(h)).toBeCloseTo(plain.idf(h) ** 2, 10);
    const share = (e: TfidfEmbedder) => {
      const v = e.vector(['levee', 'river']);
      return v.values[[...v.indices].indexOf(h)]!;
    };
    expect(share(sharp)).toBeGreaterThan(share(plain));
  });

  it('weighs repeated terms sublinearly (1 + ln tf)', () => {
    const e = new TfidfEmbedder(16);
    const v = e.vector(['x', 'x', 'x', 'y']);
    const ix = [...v.indices].indexOf(fnv1a('x') & 0xffff);
    const iy = [...v.indices].indexOf(fnv1a('y') & 0xffff);
    expect(v.values[ix]! / v.values[iy]!).toBeCloseTo(1 + Math.log(3), 5);
  });

  it('reports what it learned since the last delta, and resumes from saved state', () => {
    const e = new TfidfEmbedder(16);
    e.learn([{ text: '', terms: ['a', 'a'] }]);
    const d = e.takeLearned();
    expect(d.docs).toBe(1);
    expect(d.df.get(fnv1a('a') & 0xffff)).toBe(1);
    expect(e.takeLearned().docs).toBe(0);
    const f = new TfidfEmbedder(16);
    f.load({ docs: d.docs, df: d.df });
    expect(f.idf(fnv1a('a') & 0xffff)).toBe(e.idf(fnv1a('a') & 0xffff));
  });

  it('gives an empty vector for no terms', () => {
    expect(new TfidfEmbedder(12).vector([]).indices).toHaveLength(0);
  });
});
