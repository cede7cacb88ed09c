import { describe, expect, it } from 'vitest';
import { TfidfEmbedder } from '../../src/embed/tfidf-embedder.js';
import { StoryLinker } from '../../src/link/story-linker.js';
import { type StoryArticle, deserialiseStory, serialiseStory, storyIdFor } from '../../src/link/story-state.js';
import { testConfig } from '../helpers/runtime.js';

const options = testConfig().link;

function articles(specs: { id: string; words: string[]; published: string; outlet?: string; names?: string[] }[]): StoryArticle[] {
  const e = new TfidfEmbedder(16);
  e.learn(specs.map((s) => ({ text: '', terms: s.words })));
  return specs.map((s) => ({
    id: s.id,
    title: `Headline ${s.id}`,
    outlet: s.outlet ?? 'Outlet A',
    published: s.published,
    vector: e.vector(s.words),
    names: s.names ?? [],
    isCopy: false,
  }));
}

const LEVEE = ['levee', 'breach', 'dunvessel', 'flood', 'river', 'veshel', 'water', 'town'];
const STRIKE = ['guild', 'strike', 'dockworkers', 'wages', 'ballot', 'pier'];

describe('the story linker', () => {
  it('opens a story for a first article and files a like one from another outlet under it', () => {
    const l = new StoryLinker(options);
    const [a, b] = articles([
      { id: 'a', words: LEVEE, published: '2026-10-06T05:00:00Z' },
      { id: 'b', words: [...LEVEE.slice(0, 6), 'evacuation'], published: '2026-10-06T09:00:00Z', outlet: 'Outlet B' },
    ]);
    const first = l.plan(a!);
    expect([first.opened, first.story.id, first.outletAdded]).toEqual([true, storyIdFor('a'), false]);
    l.apply(first);
    const second = l.plan(b!);
    expect([second.opened, second.story.id, second.outletAdded]).toEqual([false, storyIdFor('a'), true]);
    expect(second.score).toBeGreaterThanOrEqual(options.storyThreshold);
    expect(second.story.articleCount).toBe(2);
    // The plan changed a copy: the committed story is unchanged until applied.
    expect(l.story(storyIdFor('a'))!.articleCount).toBe(1);
  });

  it('opens another story for an article about something else', () => {
    const l = new StoryLinker(options);
    const [a, b] = articles([
      { id: 'a', words: LEVEE, published: '2026-10-06T05:00:00Z' },
      { id: 'b', words: STRIKE, published: '2026-10-06T09:00:00Z' },
    ]);
    l.apply(l.plan(a!));
    expect(l.plan(b!).opened).toBe(true);
  });

  it('lets a story fade: one half-life after its last article, the same text scores half', () => {
    const l = new StoryLinker({ ...options, storyThreshold: 0 });
    const [a, near, far] = articles([
      { id: 'a', words: LEVEE, published: '2026-10-06T05:00:00Z' },
      { id: 'near', words: LEVEE, published: '2026-10-06T09:00:00Z' },
      { id: 'far', words: LEVEE, published: '2026-10-13T05:00:00Z' },
    ]);
    l.apply(l.plan(a!));
    const pNear = l.plan(near!);
    const pFar = l.plan(far!);
    expect(pFar.timeGapDays).toBe(options.storyHalfLifeDays);
    expect(pFar.score).toBeCloseTo(pNear.score * 0.5, 6);
  });

  it('merges two stories that turn out to be one thread, the older absorbing the newer', () => {
    const l = new StoryLinker({ ...options, storyThreshold: 0.99 });
    const [a, b, c] = articles([
      { id: 'a', words: LEVEE, published: '2026-10-06T05:00:00Z' },
      { id: 'b', words: [...LEVEE.slice(0, 7), 'repair'], published: '2026-10-07T05:00:00Z' },
      { id: 'c', words: STRIKE, published: '2026-10-07T06:00:00Z' },
    ]);
    for (const x of [a!, b!, c!]) l.apply(l.plan(x));
    expect(l.size).toBe(3);
    const merges = l.planMerges([storyIdFor('b'), storyIdFor('c')]);
    expect(merges).toEqual([{ into: storyIdFor('a'), from: storyIdFor('b'), score: expect.any(Number) }]);
    const merged = l.mergedState(storyIdFor('a'), storyIdFor('b'));
    l.applyMerge(merged, storyIdFor('b'));
    expect(l.resolve(storyIdFor('b'))).toBe(storyIdFor('a'));
    expect(l.story(storyIdFor('a'))!.articleCount).toBe(2);
    expect(l.size).toBe(2);
  });

  it('resumes from stored states and merges, planning as an uninterrupted linker does', () => {
    const run = articles(
      Array.from({ length: 20 }, (_, i) => ({
        id: `x${i}`,
        words: i % 2 ? [...LEVEE.slice(0, 5), `w${i}`] : [...STRIKE.slice(0, 4), `w${i}`],
        published: `2026-10-${String(6 + (i % 9)).padStart(2, '0')}T05:00:00Z`,
      })),
    );
    const live = new StoryLinker(options);
    for (const x of run.slice(0, 15)) live.apply(live.plan(x));
    const stored = [...new Set(run.slice(0, 15).map((x) => live.resolve(live.plan(x).story.id)))].map((id) =>
      deserialiseStory(serialiseStory(live.story(id)!)),
    );
    const resumed = new StoryLinker(options);
    resumed.load(stored, []);
    for (const x of run.slice(15)) {
      const p = live.plan(x);
      const q = resumed.plan(x);
      expect([q.story.id, q.opened, q.score]).toEqual([p.story.id, p.opened, p.score]);
      live.apply(p);
      resumed.apply(q);
    }
  });

  it('keeps every part of a story through its binary form', () => {
    const l = new StoryLinker(options);
    const [a, b] = articles([
      { id: 'a', words: LEVEE, published: '2026-10-06T05:00:00Z', names: ['Dunvessel'] },
      { id: 'b', words: LEVEE, published: '2026-10-07T05:00:00Z', outlet: 'Outlet B', names: ['Dunvessel', 'Veshel'] },
    ]);
    l.apply(l.plan(a!));
    const p = l.plan(b!);
    expect(deserialiseStory(serialiseStory(p.story))).toEqual(p.story);
  });
});
