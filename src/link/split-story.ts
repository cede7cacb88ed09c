/**
 * Splitting a story that drifted into two threads. Articles join a story one by one, each
 * close enough to the story as it stands, so a story can chain from the levee breach to an
 * unrelated council race a month on. Consolidation reads a story's articles back (the
 * whole-text vectors they joined with), divides them in two as it divides events
 * (two-means.ts, with the story half-life), and splits when the parts are less alike than
 * `storySplitThreshold`. Like every automatic grouping, a split is a suggestion.
 */
import { createHash } from 'node:crypto';
import type { Vector } from '../records.js';
import { dayNumber } from '../text/days.js';
import { type StoryArticle, type StoryState, addArticle, openStory, storyIdFor } from './story-state.js';
import { divide, divideInTwo } from './two-means.js';

/** One article of the story as stored, with the vector it joined with. */
export interface StoryMemberInput extends Omit<StoryArticle, 'id' | 'vector'> {
  articleId: string;
  vector: Vector;
}

/** Story split settings. */
export interface StorySplitOptions {
  storyHalfLifeDays: number;
  /** The two parts' centroid cosine x time decay must fall below this. */
  storySplitThreshold: number;
  /** Stories with fewer articles are not examined. */
  storySplitMinArticles: number;
  centroidTerms: number;
}

/** A story split found by consolidation, not yet committed. */
export interface StorySplitPlan {
  /** The story as it stays (same id), with the articles that remain. */
  kept: StoryState;
  /** The new story, with the articles that move. */
  split: StoryState;
  /** The ids of the articles that move. */
  moved: string[];
  /** How alike the two parts are: centroid cosine x time decay. */
  score: number;
}

/** Each part keeps at least this many articles. */
const MIN_PART = 2;

/** True when a story is due for examination: splitting on, the story big enough, and grown by half since it was last examined. */
export function storyDueForSplit(s: StoryState, o: StorySplitOptions): boolean {
  return (
    o.storySplitThreshold > 0 &&
    o.storySplitMinArticles > 0 &&
    s.articleCount >= Math.max(o.storySplitMinArticles, 2 * MIN_PART) &&
    s.articleCount >= 1.5 * s.examined
  );
}

/**
 * Divides `story`'s articles in two when they drifted apart, or returns null. `members` are
 * its articles oldest first (published, then id), so every process reaches the same split.
 */
export function planStorySplit(story: StoryState, members: readonly StoryMemberInput[], o: StorySplitOptions): StorySplitPlan | null {
  if (members.length < Math.max(o.storySplitMinArticles, 2 * MIN_PART)) return null;
  const days = members.map((m) => dayNumber(m.published.slice(0, 10)));
  const whole = {
    sparse: story.sparse,
    dense: story.dense,
    norm: story.norm,
    timeStart: dayNumber(story.firstSeen.slice(0, 10)),
    timeEnd: dayNumber(story.lastSeen.slice(0, 10)),
  };
  const division = divideInTwo(
    members.map((m, i) => ({ vector: m.vector, span: [days[i]!, days[i]!], explicit: [days[i]!, days[i]!], weight: 1 })),
    whole,
    o.storyHalfLifeDays,
  );
  if (!division || division.score >= o.storySplitThreshold) return null;
  const [p0, p1] = divide(members, division.side);
  if (p0.length < MIN_PART || p1.length < MIN_PART) return null;
  // The part with the article that opened the story keeps its id; else the larger part,
  // then the one with the older first article.
  const opener = members.findIndex((m) => storyIdFor(m.articleId) === story.id);
  const keepSide = opener >= 0 ? division.side[opener]! : p0.length !== p1.length ? (p0.length > p1.length ? 0 : 1) : division.side[0]!;
  const [keep, move] = keepSide === 0 ? [p0, p1] : [p1, p0];
  const build = (id: string, ms: readonly StoryMemberInput[]) => storyOf(id, ms, o.centroidTerms);
  const kept = build(story.id, keep);
  if (opener >= 0) kept.label = story.label;
  kept.version = story.version + 1;
  const split = build(splitStoryId(story.id, move[0]!.articleId), move);
  return { kept, split, moved: move.map((m) => m.articleId), score: division.score };
}

/** The id of the story split off `from`, starting with article `first`: the same split gives the same id. */
/** A story rebuilt from its articles (oldest first), marked examined. */
export function storyOf(id: string, ms: readonly StoryMemberInput[], centroidTerms: number): StoryState {
  const s = { ...openStory({ ...ms[0]!, id: ms[0]!.articleId }), id };
  for (const m of ms) addArticle(s, { ...m, id: m.articleId }, centroidTerms);
  s.examined = s.articleCount;
  return s;
}

export function splitStoryId(from: string, first: string): string {
  return `st_${createHash('sha256').update(`split\n${from}\n${first}`).digest('hex').slice(0, 16)}`;
}
