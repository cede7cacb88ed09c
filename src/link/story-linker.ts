/**
 * The story linker: each new article joins a story (an ongoing thread: the levee breach and
 * its aftermath) from whole-article evidence, or opens one. Like the event linker it is
 * online and sub-linear: an article is scored only against the stories an inverted index
 * over their strongest terms and names returns (plus the most recently active ones), never
 * against the whole history.
 *
 *   score = cosine(article, story centroid) x 0.5 ^ (days between them / story half-life)
 *
 * Stories organise events for people and soften linking: a sentence is compared with every
 * candidate event, but an event of another story needs a higher score to be linked
 * (link.crossStoryMargin), and such a link says so in its evidence. Plans and applies like
 * the event linker, and is rebuilt from stored states in touch order, so a restarted linker
 * assigns stories as an uninterrupted one does.
 */
import type { DenseVector, SparseVector, Vector } from '../records.js';
import { dayNumber } from '../text/days.js';
import { ApartGroups, pairKey } from './apart-groups.js';
import { CandidateIndex, type WeightedKey } from './candidate-index.js';
import { CentroidIndex } from './centroid-index.js';
import { centroidCosine, nameKey, topTermFeatures } from './event-state.js';
import { type StoryMemberInput, type StorySplitOptions, type StorySplitPlan, planStorySplit, storyDueForSplit } from './split-story.js';
import { type StoryArticle, type StoryState, addArticle, cloneStory, mergeStories, openStory } from './story-state.js';

/** Story-linking settings (see config schema for defaults and reasons). */
export interface StoryOptions extends Pick<StorySplitOptions, 'storySplitThreshold' | 'storySplitMinArticles'> {
  /** Score at or above which an article joins a story; below, it opens one. */
  storyThreshold: number;
  /** Half-life of the time decay between an article and a story, days. */
  storyHalfLifeDays: number;
  /** Two stories merge when their centroids score this alike (cosine x decay). */
  storyMergeThreshold: number;
  /** A story divides when its two parts score below this (split-story.ts). */
  storySplitThreshold: number;
  storySplitMinArticles: number;
  centroidTerms: number;
  lookupTerms: number;
  maxCandidates: number;
  postingLimit: number;
  lookupBudget: number;
  annAbove: number;
}

/** Where one article goes. */
export interface StoryPlan {
  /** The story's new state (a copy; committed state is unchanged until apply). */
  story: StoryState;
  opened: boolean;
  /** The joining score (cosine x decay); 0 for an opened story. */
  score: number;
  similarity: number;
  timeGapDays: number;
  /** True when the article's outlet had not reported on the story before. */
  outletAdded: boolean;
}

/** One story merge found by consolidation. */
export interface StoryMergePlan {
  into: string;
  from: string;
  score: number;
}

const RECENT_VOTE = 0.05;

/** Online clustering of articles into stories. */
export class StoryLinker {
  private readonly stories = new Map<string, StoryState>();
  private index: CandidateIndex;
  private centroids: CentroidIndex;
  private clock = 0;
  private names = new Map<string, number>();
  /** Merged-away story → the story it went into. */
  private redirects = new Map<string, string>();
  /** Pairs of stories an analyst kept apart (`a\nb`, ordered), never merged by consolidation. */
  private apart = new Set<string>();

  constructor(private readonly o: StoryOptions) {
    this.index = new CandidateIndex(o.postingLimit);
    this.centroids = new CentroidIndex(o.annAbove);
  }

  /** Forgets everything (before load() from the store). */
  reset(): void {
    this.stories.clear();
    this.index = new CandidateIndex(this.o.postingLimit);
    this.centroids = new CentroidIndex(this.o.annAbove);
    this.clock = 0;
    this.names = new Map();
    this.redirects = new Map();
  }

  /** The story an id now lives in, following merges. */
  resolve(id: string): string {
    let s = id;
    for (let next = this.redirects.get(s); next !== undefined; next = this.redirects.get(s)) s = next;
    return s;
  }

  /** Rebuilds the in-memory state from stored stories in the order they were touched, and the merges made. */
  load(states: Iterable<StoryState>, merges: Iterable<readonly [from: string, into: string]> = []): void {
    for (const [from, into] of merges) this.redirects.set(from, into);
    for (const s of [...states].sort((a, b) => a.touched - b.touched || (a.id < b.id ? -1 : 1))) {
      this.stories.set(s.id, s);
      this.register(s);
      this.clock = Math.max(this.clock, s.touched);
    }
  }

  /** Number of stories held. */
  get size(): number {
    return this.stories.size;
  }

  /** A story's current state. */
  story(id: string): StoryState | undefined {
    return this.stories.get(id);
  }

  /** Works out which story an article joins (or opens), without changing committed state. */
  plan(a: StoryArticle): StoryPlan {
    const keys = this.articleKeys(a);
    const ids = new Set(this.index.lookup(keys, this.o.maxCandidates, RECENT_VOTE, this.o.lookupBudget));
    if (a.vector.kind === 'dense') for (const id of this.centroids.nearest(a.vector.values, this.o.maxCandidates)) ids.add(id);
    const day = dayNumber(a.published.slice(0, 10));
    let best: StoryState | null = null;
    let bestScore = 0;
    let bestSimilarity = 0;
    let bestGap = 0;
    for (const id of ids) {
      const s = this.stories.get(id);
      if (!s) continue;
      const similarity = cosineTo(a.vector, s);
      const gap = Math.max(0, day - dayNumber(s.lastSeen.slice(0, 10)), dayNumber(s.firstSeen.slice(0, 10)) - day);
      const score = similarity * Math.pow(0.5, gap / this.o.storyHalfLifeDays);
      if (score > bestScore || (score === bestScore && best !== null && s.id < best.id)) {
        best = s;
        bestScore = score;
        bestSimilarity = similarity;
        bestGap = gap;
      }
    }
    const joins = best !== null && bestScore >= this.o.storyThreshold;
    const story = joins ? cloneStory(best!) : openStory(a);
    const outletAdded = joins && !story.outlets.has(a.outlet);
    addArticle(story, a, this.o.centroidTerms);
    story.touched = ++this.clock;
    return {
      story,
      opened: !joins,
      score: joins ? bestScore : 0,
      similarity: joins ? bestSimilarity : 0,
      timeGapDays: joins ? bestGap : 0,
      outletAdded,
    };
  }

  /** Makes a committed plan part of the linker's state. */
  apply(plan: StoryPlan): void {
    this.stories.set(plan.story.id, plan.story);
    this.register(plan.story);
  }

  /** Pairs among `ids` whose centroids are alike enough to be one story; the older absorbs the newer. */
  planMerges(ids: Iterable<string>): StoryMergePlan[] {
    const merges: StoryMergePlan[] = [];
    const gone = new Set<string>();
    const apart = new ApartGroups(this.apart);
    for (const id of ids) {
      const s = this.stories.get(id);
      if (!s || gone.has(id)) continue;
      const keys = topTermFeatures(s, this.o.lookupTerms * 2).map((key) => ({ key, weight: 1 }));
      const others = new Set(this.index.lookup(keys, this.o.maxCandidates, 0));
      if (s.dense) for (const x of this.centroids.nearest(Float32Array.from(s.dense), this.o.maxCandidates)) others.add(x);
      for (const other of others) {
        if (other === id || gone.has(other) || apart.keptApart(id, other)) continue;
        const t = this.stories.get(other);
        if (!t) continue;
        const gap = Math.max(
          0,
          dayNumber(t.firstSeen.slice(0, 10)) - dayNumber(s.lastSeen.slice(0, 10)),
          dayNumber(s.firstSeen.slice(0, 10)) - dayNumber(t.lastSeen.slice(0, 10)),
        );
        const score = centroidCosine(s, t) * Math.pow(0.5, gap / this.o.storyHalfLifeDays);
        if (score < this.o.storyMergeThreshold) continue;
        const [into, from] = s.firstSeen < t.firstSeen || (s.firstSeen === t.firstSeen && s.id < t.id) ? [s, t] : [t, s];
        merges.push({ into: into.id, from: from.id, score });
        gone.add(from.id);
        apart.merged(from.id, into.id);
        if (from.id === id) break;
      }
    }
    return merges;
  }

  /** The merged state of two stories (neither changed). */
  mergedState(into: string, from: string): StoryState {
    const merged = mergeStories(this.stories.get(into)!, this.stories.get(from)!, this.o.centroidTerms);
    merged.touched = ++this.clock;
    return merged;
  }

  /** Stories an analyst's corrections keep apart (link/corrections.ts); pairs of other ids are ignored. */
  setApart(pairs: readonly (readonly [string, string])[]): void {
    this.apart = new Set(pairs.map(([a, b]) => pairKey(a, b)));
  }

  /** Applies the committed undo of a story merge: `from` is back, `into` as it was. */
  applyUnmerge(from: StoryState, into: StoryState): void {
    this.redirects.delete(from.id);
    for (const s of [from, into]) {
      this.stories.set(s.id, s);
      this.register(s);
      this.clock = Math.max(this.clock, s.touched);
    }
  }

  /** Applies the committed undo of a story split: `into` leaves, `from` is as it was. */
  applyUnsplit(from: StoryState, into: string): void {
    this.stories.delete(into);
    this.index.remove(into);
    this.centroids.remove(into);
    this.stories.set(from.id, from);
    this.register(from);
  }

  /** Applies a committed story merge. */
  applyMerge(merged: StoryState, from: string): void {
    for (const pair of [...this.apart]) {
      const [a, b] = pair.split('\n') as [string, string];
      if (a !== from && b !== from) continue;
      this.apart.delete(pair);
      this.apart.add(pairKey(a === from ? merged.id : a, b === from ? merged.id : b));
    }
    this.redirects.set(from, merged.id);
    this.stories.delete(from);
    this.index.remove(from);
    this.centroids.remove(from);
    this.stories.set(merged.id, merged);
    this.register(merged);
  }

  /**
   * The stories among `ids` due for a split examination (split-story.ts storyDueForSplit).
   * Marks them examined; the caller stores the marks of those that are not split, so that
   * a restarted linker examines what an uninterrupted one would.
   */
  splitCandidates(ids: Iterable<string>): string[] {
    const out: string[] = [];
    for (const id of ids) {
      const s = this.stories.get(id);
      if (!s || !storyDueForSplit(s, this.o)) continue;
      s.examined = s.articleCount;
      out.push(id);
    }
    return out;
  }

  /** Divides a story whose articles drifted apart, or null. Changes nothing. */
  planSplit(id: string, members: readonly StoryMemberInput[]): StorySplitPlan | null {
    const s = this.stories.get(id);
    const plan = s ? planStorySplit(s, members, this.o) : null;
    if (plan) for (const part of [plan.kept, plan.split]) part.touched = ++this.clock;
    return plan;
  }

  /** Applies a committed split: the story takes its smaller self, the new story joins the index. */
  applySplit(plan: StorySplitPlan): void {
    for (const s of [plan.kept, plan.split]) {
      this.stories.set(s.id, s);
      this.register(s);
    }
  }

  private register(s: StoryState): void {
    const keys = topTermFeatures(s, this.o.lookupTerms * 2);
    for (const k of s.names.keys()) keys.push(this.nameKeyOf(k));
    this.index.register(s.id, keys, s.touched);
    if (s.dense) this.centroids.upsert(s.id, s.dense);
  }

  private nameKeyOf(name: string): number {
    let key = this.names.get(name);
    if (key === undefined) this.names.set(name, (key = -(this.names.size + 1)));
    return key;
  }

  /** An article's lookup keys: its strongest terms and the names it gives. */
  private articleKeys(a: StoryArticle): WeightedKey[] {
    const keys: WeightedKey[] = [];
    if (a.vector.kind === 'sparse') {
      const v: SparseVector = a.vector;
      const order = [...v.indices.keys()].sort((x, y) => v.values[y]! - v.values[x]! || v.indices[x]! - v.indices[y]!);
      for (const i of order.slice(0, this.o.lookupTerms * 2)) keys.push({ key: v.indices[i]!, weight: v.values[i]! });
    }
    for (const n of new Set(a.names.map(nameKey))) {
      const key = n === '' ? undefined : this.names.get(n);
      if (key !== undefined) keys.push({ key, weight: 0.5 });
    }
    return keys;
  }
}

/** Cosine of an (L2-normalised) vector with a centroid sum. */
function cosineTo(v: Vector, s: StoryState): number {
  if (s.norm === 0) return 0;
  let dot = 0;
  if (v.kind === 'sparse') {
    for (let i = 0; i < v.indices.length; i++) dot += (s.sparse.get(v.indices[i]!) ?? 0) * v.values[i]!;
  } else if (s.dense) {
    const d: DenseVector = v;
    for (let i = 0; i < d.values.length; i++) dot += d.values[i]! * s.dense[i]!;
  }
  return dot / s.norm;
}
