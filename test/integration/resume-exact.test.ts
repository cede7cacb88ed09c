import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { beforeAll, describe, expect, it } from 'vitest';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import type { Article } from '../../src/records.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

/** Every stored link as article#sentence#rank → event, score and the bar it cleared; each article's story; each story's record; from the file alone. */
function links(path: string): { links: Map<string, [string, number, number]>; stories: Map<string, string>; records: Map<string, string> } {
  const d = new Database(path, { readonly: true });
  try {
    const rows = d.prepare('SELECT article_id, sentence_idx, rank, event_id, score, evidence FROM links').all() as {
      article_id: string;
      sentence_idx: number;
      rank: number;
      event_id: string;
      score: number;
      evidence: string;
    }[];
    const stories = d.prepare('SELECT id, story_id FROM articles').raw().all() as [string, string][];
    const records = d.prepare('SELECT id, label || article_count || names FROM stories').raw().all() as [string, string][];
    return {
      links: new Map(
        rows.map((r) => [
          `${r.article_id}#${r.sentence_idx}#${r.rank}`,
          [r.event_id, r.score, (JSON.parse(r.evidence) as { bar?: number }).bar ?? -1],
        ]),
      ),
      stories: new Map(stories),
      records: new Map(records),
    };
  } finally {
    d.close();
  }
}

describe('a linker restarted from its store', () => {
  let articles: Article[];
  let dir: string;
  let uninterrupted: ReturnType<typeof links>;
  beforeAll(async () => {
    articles = (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
    dir = mkdtempSync(join(tmpdir(), 'strandline-resume-'));
    const rt = await testRuntime({}, join(dir, 'whole.sqlite'));
    await runArticles(rt, articles);
    await rt.close();
    uninterrupted = links(join(dir, 'whole.sqlite'));
    expect(uninterrupted.records.size).toBeGreaterThan(5);
  });

  // Cuts after a consolidation pass (25, 50: consolidateEvery) and in between, so the
  // restarted linker rebuilds the index, the rarity counts, the split marks, the stories and
  // the calibration tally from the store.
  it.each([25, 37, 50, 64, 99])(
    'links and files into stories exactly as an uninterrupted one, every score and calibrated bar bit for bit, when stopped after %i articles',
    async (cut) => {
      const path = join(dir, `cut-${cut}.sqlite`);
      const first = await testRuntime({}, path);
      await runArticles(first, articles.slice(0, cut));
      await first.close();
      const second = await testRuntime({}, path);
      await runArticles(second, articles);
      await second.close();
      expect(links(path)).toEqual(uninterrupted);
    },
  );

  // The store fails once at the due point (25), after the articles are stored: the pass is
  // owed, and whoever links next takes it up before the next article, whether the same run
  // (30 articles) or a restarted one (the first run ends at 25).
  it.each([
    { when: 'before the pass read its events', method: 'recentEventIds', first: 25 },
    { when: 'before the pass read its events', method: 'recentEventIds', first: 30 },
    { when: 'before the pass was settled', method: 'settleConsolidation', first: 25 },
    { when: 'before the pass was settled', method: 'settleConsolidation', first: 30 },
  ] as const)(
    'links exactly as an uninterrupted one when a consolidation pass failed $when (first run of $first articles)',
    async ({ method, first }) => {
      const path = join(dir, `owed-${method}-${first}.sqlite`);
      const rt = await testRuntime({}, path);
      // Fails the first call only, as a store back after a blip would.
      const store = rt.store as unknown as Record<string, (n: number) => Promise<unknown>>;
      const real = store[method]!.bind(rt.store);
      let failed = false;
      store[method] = (n) => {
        if (failed) return real(n);
        failed = true;
        return Promise.reject(new Error('store unreachable'));
      };
      const outcomes = await runArticles(rt, articles.slice(0, first));
      expect(outcomes.filter((o) => o.status === 'stored')).toHaveLength(first);
      expect(await rt.store.consolidationOwed()).toBe(first === 25 ? 25 : null);
      await rt.close();
      const second = await testRuntime({}, path);
      await runArticles(second, articles);
      expect(await second.store.consolidationOwed()).toBeNull();
      await second.close();
      expect(links(path)).toEqual(uninterrupted);
    },
  );
});
