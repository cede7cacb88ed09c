import { readFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { CopyIndex } from '../../src/copies/copy-index.js';
import { buildPairSet } from '../helpers/pair-set.js';
import { shingles, sketch } from '../../src/copies/minhash.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import type { Article } from '../../src/records.js';
import type { Runtime } from '../../src/runtime.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

async function demoArticles(): Promise<{ articles: Article[]; story: Map<string, { story: string; copyOf: string | null }> }> {
  const articles = (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles;
  const story = new Map(
    readFileSync(new URL('../../demo-feed/stories.jsonl', import.meta.url), 'utf8')
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as { article: string; story: string; copyOf: string | null })
      .map((s) => [s.article, s]),
  );
  return { articles, story };
}

describe('recognising syndicated copies', () => {
  it('separates lightly edited copies from other articles, even on the same story by another outlet (built pair set)', async () => {
    const { articles, story } = await demoArticles();
    const originals = articles
      .filter((a) => !story.get(a.id)?.copyOf)
      .map((a) => ({ id: a.id, text: a.text, story: story.get(a.id)?.story ?? null }));
    const pairs = buildPairSet(originals);
    const threshold = testConfig().copies.nearThreshold;
    const counts = { tp: 0, fp: 0, fn: 0, tn: 0 };
    for (const p of pairs) {
      const idx = new CopyIndex({ nearThreshold: threshold, windowDays: 7 });
      idx.add('a', sketch(shingles(p.a)), 0);
      const found = idx.find(sketch(shingles(p.b)), 3_600_000) !== null;
      counts[found ? (p.copy ? 'tp' : 'fp') : p.copy ? 'fn' : 'tn']++;
    }
    const precision = counts.tp / (counts.tp + counts.fp);
    const recall = counts.tp / (counts.tp + counts.fn);
    expect(counts.tp + counts.fn).toBeGreaterThan(400);
    expect(counts.tn + counts.fp).toBeGreaterThan(800);
    // Measured when the default was set: precision 1.000, recall 0.981 (466 of 475).
    expect(precision).toBeGreaterThanOrEqual(0.99);
    expect(recall).toBeGreaterThanOrEqual(0.95);
  });

  describe('in the pipeline', () => {
    let rt: Runtime;
    afterEach(async () => rt.close());

    function editedCopy(a: Article, outlet: string): Article {
      const paras = a.text.split(/\n\n+/);
      return {
        ...a,
        id: `https://ledger.example/wire/${encodeURIComponent(a.id)}`,
        outlet,
        url: null,
        title: `Wire: ${a.title}`,
        text: `Harbour Ledger staff and agencies\n\n${paras.slice(0, Math.max(1, paras.length - 1)).join('\n\n')}`,
        contentHash: `edited-${a.contentHash}`,
        published: new Date(Date.parse(a.published!) + 3 * 3_600_000).toISOString(),
      };
    }

    it('stores an edited copy as a copy of its original, counted as its outlet reporting but not as independent', async () => {
      rt = await testRuntime();
      const { articles } = await demoArticles();
      const original = articles.filter((a) => a.text.split(/\s+/).length > 80)[0]!;
      const copy = editedCopy(original, 'Harbour Ledger');
      const [o1, o2] = await runArticles(rt, [original, copy]);
      expect(o1!.duplicateOf).toBeNull();
      expect(o2).toMatchObject({ status: 'stored', duplicateOf: original.id });
      const stored = (await rt.store.getArticle(copy.id))!.article;
      expect(stored.duplicateOf).toBe(original.id);
      expect(stored.copySimilarity).toBeGreaterThanOrEqual(0.5);
      expect(stored.copySimilarity).toBeLessThan(1);
      const eventId = (await rt.store.getArticle(copy.id))!.sentences.flatMap((s) => s.links)[0]!.eventId;
      const event = (await rt.store.getEvent(eventId))!;
      expect(event.event.outlets).toContain('Harbour Ledger');
      expect(event.mentions.filter((m) => m.outlet === 'Harbour Ledger').every((m) => m.isCopy)).toBe(true);
    });

    it('recognises the copy after a restart (the sketches are stored) and forgets the sketch with the text', async () => {
      const path = `${await import('node:os').then((os) => os.tmpdir())}/strandline-copies-${process.pid}-${Date.now()}.sqlite`;
      const { articles } = await demoArticles();
      const original = articles.filter((a) => a.text.split(/\s+/).length > 80)[1]!;
      rt = await testRuntime({}, path);
      await runArticles(rt, [original]);
      await rt.close();
      rt = await testRuntime({}, path);
      const [out] = await runArticles(rt, [editedCopy(original, 'Harbour Ledger')]);
      expect(out!.duplicateOf).toBe(original.id);
      expect(await rt.store.eraseArticleText(original.id)).toBe(true);
      expect(await rt.store.recentSketches(7)).toHaveLength(1);
    });

    it('stores the same article reached through another link (another guid, a tracking parameter) once', async () => {
      rt = await testRuntime();
      const { articles } = await demoArticles();
      const a = articles.find((x) => x.url)!;
      const again = {
        ...a,
        id: 'urn:uuid:4f0c6f1e-0000-4000-8000-000000000001',
        url: `${a.url}?utm_source=rss#top`,
        text: `${a.text} (Updated.)`,
        contentHash: 'other',
      };
      const [first, second] = await runArticles(rt, [a, again]);
      expect(first!.status).toBe('stored');
      expect(second).toMatchObject({ status: 'duplicate', reason: expect.stringContaining('same URL') });
      const [third] = await runArticles(rt, [{ ...again, id: 'urn:uuid:4f0c6f1e-0000-4000-8000-000000000002' }]);
      expect(third!.status).toBe('duplicate');
      expect((await rt.store.counts()).articles).toBe(1);
    });

    it('leaves edited copies alone when copies.near is off', async () => {
      rt = await testRuntime({ copies: { near: false } });
      const { articles } = await demoArticles();
      const original = articles.filter((a) => a.text.split(/\s+/).length > 80)[2]!;
      const [, out] = await runArticles(rt, [original, editedCopy(original, 'Harbour Ledger')]);
      expect(out!.duplicateOf).toBeNull();
    });
  });
});
