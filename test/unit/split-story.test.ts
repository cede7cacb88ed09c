import { describe, expect, it } from 'vitest';
import { TfidfEmbedder } from '../../src/embed/tfidf-embedder.js';
import { type StoryMemberInput, planStorySplit, splitStoryId, storyDueForSplit } from '../../src/link/split-story.js';
import { addArticle, openStory, storyIdFor } from '../../src/link/story-state.js';

const embedder = new TfidfEmbedder(16);
const options = { storyHalfLifeDays: 7, storySplitThreshold: 0.2, storySplitMinArticles: 4, centroidTerms: 300 };

function member(i: number, words: string, day: number): StoryMemberInput {
  return {
    articleId: `a${i}`,
    title: `Article ${i}`,
    outlet: i % 2 ? 'Harbour Ledger' : 'Korrin Evening Post',
    published: `2026-10-${String(day).padStart(2, '0')}T10:00:00.000Z`,
    isCopy: false,
    names: [],
    vector: embedder.vector(words.split(' ')),
  };
}

function storyOf(members: readonly StoryMemberInput[]) {
  const s = openStory({ ...members[0]!, id: members[0]!.articleId });
  for (const m of members) addArticle(s, { ...m, id: m.articleId }, 300);
  return s;
}

const LEVEE = ['levee breach dunvessel flood', 'dunvessel levee flood crews', 'levee breach flood repair', 'flood dunvessel levee night'];
const COUNCIL = [
  'council election ballot mayor',
  'mayor council ballot count',
  'election count council seats',
  'ballot mayor election seats',
];

describe('splitting a story', () => {
  it('divides a story chained from one thread into another, the opening article keeping the story', () => {
    const members = [...LEVEE.map((w, i) => member(i, w, 1 + i)), ...COUNCIL.map((w, i) => member(4 + i, w, 20 + i))];
    const story = storyOf(members);
    const plan = planStorySplit(story, members, options)!;
    expect(plan.kept.id).toBe(storyIdFor('a0'));
    expect(plan.kept.label).toBe(story.label);
    expect(plan.moved).toEqual(['a4', 'a5', 'a6', 'a7']);
    expect(plan.split.id).toBe(splitStoryId(story.id, 'a4'));
    expect([plan.kept.articleCount, plan.split.articleCount]).toEqual([4, 4]);
    expect(plan.split.firstSeen).toBe('2026-10-20T10:00:00.000Z');
    expect(plan.score).toBeLessThan(options.storySplitThreshold);
    // Both parts count as examined at their size, and the same input gives the same split.
    expect([plan.kept.examined, plan.split.examined]).toEqual([4, 4]);
    expect(planStorySplit(story, members, options)).toEqual(plan);
  });

  it('leaves a story of one thread whole', () => {
    const members = [...LEVEE, ...LEVEE].map((w, i) => member(i, w, 1 + i));
    expect(planStorySplit(storyOf(members), members, options)).toBeNull();
  });

  it('examines a story once it is big enough, then again only once it has grown by half', () => {
    const s = storyOf(LEVEE.map((w, i) => member(i, w, 1 + i)));
    expect(storyDueForSplit(s, options)).toBe(true);
    expect(storyDueForSplit(s, { ...options, storySplitMinArticles: 5 })).toBe(false);
    expect(storyDueForSplit(s, { ...options, storySplitMinArticles: 0 })).toBe(false);
    s.examined = 4;
    expect(storyDueForSplit(s, options)).toBe(false);
    s.articleCount = 6;
    expect(storyDueForSplit(s, options)).toBe(true);
  });
});
