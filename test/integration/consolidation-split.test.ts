import { afterEach, describe, expect, it } from 'vitest';
import { from, lastValueFrom, toArray } from 'rxjs';
import { consolidate } from '../../src/link/consolidate.js';
import { runPipeline } from '../../src/pipeline/index.js';
import type { Article } from '../../src/records.js';
import type { Runtime } from '../../src/runtime.js';
import { buildApp } from '../../src/api/build-app.js';
import { createLogger } from '../../src/logger.js';
import { linkDetected } from '../../src/eval/link-detected.js';
import { detectArticles } from '../../src/eval/prepare-mentions.js';
import { testRuntime } from '../helpers/runtime.js';

// One story drifting into another through a sentence that names both: a warehouse fire at
// the Korrin pier, then a dockworkers' strike at the same pier. Each article is one mention.
const TEXTS = [
  'Fire crews fought a warehouse blaze at the Korrin pier through the night.',
  'The warehouse blaze at the Korrin pier sent thick smoke over the harbour.',
  'Fire crews contained the warehouse blaze and the smoke cleared over the harbour.',
  'After the warehouse blaze, dockworkers at the Korrin pier voted to strike over wages.',
  'Dockworkers voted to strike over wages and the guild called a ballot.',
  'The guild ballot on wages ended with dockworkers walking out on strike.',
  'Dockworkers stayed out on strike over wages after the guild ballot.',
];

function articles(): Article[] {
  return TEXTS.map((text, i) => ({
    id: `https://pier.example/${i}`,
    outlet: i % 2 ? 'Harbour Ledger' : 'Korrin Evening Post',
    url: `https://pier.example/${i}`,
    title: `Pier ${i}`,
    published: `2026-10-0${1 + Math.floor(i / 3)}T10:00:00.000Z`,
    fetched: '2026-10-09T10:00:00.000Z',
    language: 'en',
    text,
    contentHash: `h${i}`,
    duplicateOf: null,
    source: 'test',
  }));
}

/** A low link threshold chains the articles into one event; splits are left to a consolidation pass the test runs. */
const SPLITTING = {
  link: {
    threshold: 0.1,
    calibration: { mode: 'fixed' as const },
    crossStoryMargin: 0,
    splitThreshold: 0.2,
    splitMinMentions: 4,
    consolidateEvery: 0,
  },
};

describe('consolidation splits an event that drifted', () => {
  let rt: Runtime;
  afterEach(async () => rt.close());

  async function chainedRun(): Promise<string> {
    rt = await testRuntime(SPLITTING);
    const outcomes = await lastValueFrom(
      runPipeline(from(articles()), { ...rt, selectMentions: () => ({ kind: 'article' }) }).pipe(toArray()),
    );
    const events = new Set(outcomes.flatMap((o) => o.assignments.flatMap((a) => a.eventIds)));
    expect(events.size).toBe(1);
    return [...events][0]!;
  }

  it('relabels the event left behind when its label sentence moved, in the store and in the notification alike', async () => {
    rt = await testRuntime(SPLITTING);
    const outcomes = await lastValueFrom(
      runPipeline(from(articles()), { ...rt, selectMentions: () => ({ kind: 'sentences', indices: new Set([0]) }) }).pipe(toArray()),
    );
    const id = outcomes[0]!.assignments[0]!.eventIds[0]!;
    // As if the event had been labelled by a strike report (a split-off part keeps no opener of its own).
    (rt.store as unknown as { db: import('better-sqlite3').Database }).db
      .prepare('UPDATE events SET label = ? WHERE id = ?')
      .run(TEXTS[5], id);
    const { splits } = await consolidate(rt, [id], []);
    expect(splits).toHaveLength(1);
    expect(splits[0]!.moved.map((m) => m.articleId)).toContain('https://pier.example/5');
    expect((await rt.store.getEvent(id))!.event.label).toBe(TEXTS[0]);
    const message = (await rt.store.notificationsAfter(0, 1000)).items.find((d) => d.type === 'event.split')!;
    expect(JSON.parse(message.body).data.event.label).toBe(TEXTS[0]);
  });

  it('moves the strike reports to a new event, records the split and notifies it', async () => {
    const id = await chainedRun();
    const { merges, splits } = await consolidate(rt, [id], []);
    expect(merges).toEqual([]);
    expect(splits).toHaveLength(1);
    const split = splits[0]!;
    expect(split.from).toBe(id);
    const url = (i: number) => `https://pier.example/${i}`;
    // The sentence that names both may go either way; the fire and the strike reports may not.
    const moved = split.moved.map((m) => m.articleId);
    expect(moved).toEqual(expect.arrayContaining([4, 5, 6].map(url)));
    expect(moved).not.toEqual(expect.arrayContaining([url(0)]));

    const kept = await rt.store.getEvent(id);
    expect(kept!.mentions.map((m) => m.articleId)).toEqual(expect.arrayContaining([0, 1, 2].map(url)));
    expect(kept!.mentions.length + moved.length).toBe(7);
    expect(kept!.splits).toEqual([{ from: id, into: split.into, mentions: moved.length, score: split.score, at: expect.any(String) }]);
    expect((await rt.store.getEvent(split.into))!.event.mentionCount).toBe(moved.length);

    const messages = (await rt.store.notificationsAfter(0, 1000)).items.filter((d) => d.type === 'event.split');
    expect(messages).toHaveLength(1);
    const body = JSON.parse(messages[0]!.body) as {
      data: { event: { id: string }; splitOff: { id: string }; moved: unknown[]; note: string };
    };
    expect(body.data.event.id).toBe(id);
    expect(body.data.splitOff.id).toBe(split.into);
    expect(body.data.moved).toHaveLength(moved.length);
    expect(body.data.note).toMatch(/suggestion/);

    // A second pass finds nothing more to do, and the API shows the split on both events.
    expect(await consolidate(rt, [id, split.into], [])).toEqual({ merges: [], splits: [], storyMerges: [], storySplits: [] });
    const app = await buildApp({
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'finished', processed: 7, total: 7, stored: 7, rejected: 0 }),
    });
    const res = await app.inject({ url: `/api/events/${split.into}` });
    expect(res.statusCode).toBe(200);
    expect(res.json().splits).toEqual([expect.objectContaining({ from: id, into: split.into, mentions: moved.length })]);
    await app.close();
  });

  it('the evaluation link stage splits the same way the pipeline and the store do', async () => {
    const link = {
      threshold: 0.1,
      calibration: { mode: 'fixed' },
      crossStoryMargin: 0,
      splitThreshold: 0.2,
      splitMinMentions: 4,
      consolidateEvery: 7,
    };
    rt = await testRuntime({ link });
    const outcomes = await lastValueFrom(
      runPipeline(from(articles()), { ...rt, selectMentions: () => ({ kind: 'article' }) }).pipe(toArray()),
    );
    expect(outcomes.at(-1)!.splits).toHaveLength(1);
    const detected = await detectArticles(rt.nlp, articles(), () => ({ kind: 'article' }), rt.config, rt.embedder);
    const alone = await linkDetected(rt.config, detected, {
      nlp: rt.nlp,
      logger: createLogger('silent'),
      now: () => new Date('2026-10-09T10:00:00.000Z'),
    });
    const last = (os: typeof outcomes) =>
      os.at(-1)!.splits.map((sp) => ({ moved: sp.moved.map((m) => m.articleId).sort(), mentions: sp.moved.length }));
    expect(last(alone.outcomes)).toEqual(last(outcomes));
    const groups = (os: typeof outcomes) => os.map((o) => o.assignments.map((a) => a.eventIds.length));
    expect(groups(alone.outcomes)).toEqual(groups(outcomes));
  });

  it('leaves an event whole once one of its mentions had its text erased', async () => {
    const id = await chainedRun();
    await rt.store.eraseArticleText('https://pier.example/5');
    expect((await consolidate(rt, [id], [])).splits).toEqual([]);
  });
});

describe('consolidation splits a story that chained two threads', () => {
  let rt: Runtime;
  afterEach(async () => rt.close());

  /** Every article joins the one story (story threshold 0); each is its own event. */
  async function oneStory(): Promise<string> {
    rt = await testRuntime({
      link: {
        threshold: 0.99,
        calibration: { mode: 'fixed' },
        storyThreshold: 0,
        storySplitThreshold: 0.2,
        storySplitMinArticles: 4,
        consolidateEvery: 0,
      },
    });
    const outcomes = await lastValueFrom(
      runPipeline(from(articles()), { ...rt, selectMentions: () => ({ kind: 'article' }) }).pipe(toArray()),
    );
    const stories = new Set(outcomes.map((o) => o.story));
    expect(stories.size).toBe(1);
    return [...stories][0]!;
  }

  it('moves the strike reports and the events they opened to a new story, records the split and notifies it', async () => {
    const id = await oneStory();
    const { storySplits } = await consolidate(rt, [], [id]);
    expect(storySplits).toHaveLength(1);
    const split = storySplits[0]!;
    expect(split.from).toBe(id);
    const url = (i: number) => `https://pier.example/${i}`;
    expect(split.moved).toEqual(expect.arrayContaining([4, 5, 6].map(url)));
    expect(split.moved).not.toContain(url(0));

    const kept = (await rt.store.getStory(id))!;
    const off = (await rt.store.getStory(split.into))!;
    expect(off.articles.map((a) => a.id).sort()).toEqual([...split.moved].sort());
    expect(kept.articles.length + off.articles.length).toBe(7);
    // Each event goes with the article that first reported it.
    expect(off.events).toHaveLength(split.moved.length);
    for (const e of off.events) expect((await rt.store.getEvent(e.id))!.event.story).toBe(split.into);
    const record = { from: id, into: split.into, articles: split.moved.length, score: split.score, at: expect.any(String) };
    expect(kept.splits).toEqual([record]);
    expect(off.splits).toEqual([record]);

    const messages = (await rt.store.notificationsAfter(0, 1000)).items.filter((d) => d.type === 'story.split');
    expect(messages).toHaveLength(1);
    const body = JSON.parse(messages[0]!.body) as {
      data: { story: { id: string }; splitOff: { id: string }; articlesMoved: string[]; note: string };
    };
    expect(body.data.story.id).toBe(id);
    expect(body.data.splitOff.id).toBe(split.into);
    expect(body.data.articlesMoved).toEqual(split.moved);
    expect(body.data.note).toMatch(/suggestion/);

    // A second pass finds nothing more to do; the API lists the split, and new articles on
    // the strike are now judged against the strike's own story.
    expect((await consolidate(rt, [], [id, split.into])).storySplits).toEqual([]);
    const app = await buildApp({
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'finished', processed: 7, total: 7, stored: 7, rejected: 0 }),
    });
    const res = await app.inject({ url: `/api/stories/${split.into}` });
    expect(res.statusCode).toBe(200);
    expect(res.json().splits).toEqual([expect.objectContaining({ from: id, into: split.into, articles: split.moved.length })]);
    await app.close();
    expect(rt.stories.story(split.into)!.articleCount).toBe(split.moved.length);
  });

  it('leaves a story whole once one of its articles had its text erased', async () => {
    const id = await oneStory();
    await rt.store.eraseArticleText('https://pier.example/5');
    expect((await consolidate(rt, [], [id])).storySplits).toEqual([]);
  });
});
