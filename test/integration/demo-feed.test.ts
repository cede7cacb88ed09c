import { readdirSync } from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import type { Runtime } from '../../src/runtime.js';
import { DEMO_DIR, demoGold, demoStories } from '../helpers/demo.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

const gold = demoGold();
const stories = demoStories();
const storyOf = new Map(stories.map((s) => [s.article, s.story]));
// Event ids carry their story as a prefix (flood-…, bridge-…); see demo-feed/README.md.
const HOME_STORY: Record<string, string> = {
  flood: 'flood-valley',
  bridge: 'flood-bridge',
  strike: 'port-strike',
  budget: 'budget',
  fire: 'warehouse-fire',
  trial: 'maskell-trial',
};

describe('the demo scenario', () => {
  it('has at least 6 outlets publishing in all three feed formats', () => {
    const files = readdirSync(`${DEMO_DIR}feeds`);
    expect(files).toHaveLength(6);
    expect(new Set(files.map((f) => f.replace(/^[^.]+\./, '')))).toEqual(new Set(['rss.xml', 'atom.xml', 'feed.json']));
    expect(new Set(stories.map((s) => s.outlet)).size).toBeGreaterThanOrEqual(6);
  });

  it('has at least 100 articles over at least 10 days, on 3 topics of at least 2 stories each', () => {
    expect(stories.length).toBeGreaterThanOrEqual(100);
    const topics = new Map<string, Set<string>>();
    for (const s of stories) topics.set(s.topic, (topics.get(s.topic) ?? new Set()).add(s.story));
    expect(topics.size).toBeGreaterThanOrEqual(3);
    for (const storiesOfTopic of topics.values()) expect(storiesOfTopic.size).toBeGreaterThanOrEqual(2);
  });

  it('has at least 15 sentences that refer back to an event of another story, and sentences with several events', () => {
    const bySentence = new Map<string, string[]>();
    for (const g of gold) bySentence.set(`${g.article}#${g.sentence}`, [...(bySentence.get(`${g.article}#${g.sentence}`) ?? []), g.event]);
    const cross = [...bySentence].filter(([k, evs]) =>
      evs.some((e) => HOME_STORY[e.split('-')[0]!] !== storyOf.get(k.slice(0, k.lastIndexOf('#')))),
    );
    expect(cross.length).toBeGreaterThanOrEqual(15);
    expect([...bySentence.values()].filter((evs) => evs.length >= 2).length).toBeGreaterThanOrEqual(5);
  });

  it('has a wire story copied by three outlets', () => {
    const copies = stories.filter((s) => s.copyOf);
    expect(new Set(copies.map((c) => c.copyOf)).size).toBe(1);
    expect(new Set(copies.map((c) => c.outlet)).size).toBe(3);
  });
});

describe('the demo through the pipeline', () => {
  let rt: Runtime;
  beforeAll(async () => {
    rt = await testRuntime();
    const input = await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest);
    expect(input.problems).toEqual([]);
    await runArticles(rt, input.articles);
  });

  it('splits every article so that each gold sentence index points at its gold text', async () => {
    const wrong: string[] = [];
    for (const g of gold) {
      const a = await rt.store.getArticle(g.article);
      const s = a?.sentences[g.sentence];
      if (s?.text !== g.text)
        wrong.push(`${g.article}#${g.sentence}: expected ${JSON.stringify(g.text)}, split gave ${JSON.stringify(s?.text)}`);
    }
    expect(wrong).toEqual([]);
  });

  it('stores every article once and marks the three wire copies as copies of the original', async () => {
    expect((await rt.store.counts()).articles).toBe(stories.length);
    for (const s of stories.filter((x) => x.copyOf)) expect((await rt.store.getArticle(s.article))!.article.duplicateOf).toBe(s.copyOf);
  });
});
