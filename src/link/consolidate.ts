/**
 * Consolidation: at fixed points of the stream, merges stories and events that turn out to
 * be one and splits events that drifted into two happenings, each change one transaction
 * with its notifications (labels as the store holds them).
 */
import type { Config } from '../config/schema.js';
import type { Logger } from '../logger.js';
import { buildMergeMessages, buildSplitMessages, buildStoryMergeMessages, buildStorySplitMessages } from '../notify/messages.js';
import type { EmbeddedMention } from '../records.js';
import type { Store } from '../store/store.js';
import { type EventState, outletRows, serialiseEvent, toRecord } from './event-state.js';
import { relabelAfter } from './labels.js';
import type { OnlineLinker } from './online-linker.js';
import type { StoryLinker } from './story-linker.js';
import type { StoryMemberInput } from './split-story.js';
import { type StoryState, serialiseStory, storyRecord } from './story-state.js';

/** What consolidation works with: the linkers' memory, the store, and when and whom to notify. */
export interface ConsolidationContext {
  config: Readonly<Config>;
  linker: OnlineLinker;
  stories: StoryLinker;
  store: Store;
  logger: Logger;
  now: () => Date;
}

/** One merge: `from` now lives in `into`. */
export interface MergeOutcome {
  from: string;
  into: string;
  score: number;
}

/** One split as reported to callers: the `moved` mentions left `from` for the new event `into`. */
export interface SplitOutcome {
  from: string;
  into: string;
  score: number;
  moved: { articleId: string; sentenceIndex: number }[];
}

/** One story split as reported to callers: the `moved` articles left `from` for the new story `into`. */
export interface StorySplitOutcome {
  from: string;
  into: string;
  score: number;
  moved: string[];
}

/** What one consolidation pass changed. */
export interface ConsolidationOutcome {
  merges: MergeOutcome[];
  splits: SplitOutcome[];
  storyMerges: MergeOutcome[];
  storySplits: StorySplitOutcome[];
}

/**
 * Counts stored articles over the whole store, so that a restarted process consolidates at
 * the same points, and says when consolidation is due (every `consolidateEvery`). The store
 * records a due pass as owed with the article that makes it due, until the pass completes:
 * a pass that a failure cut short (the store unreachable, the lease lost) is owed still, and
 * the next run takes it up before linking on, so that it happens at the same point.
 */
export class ConsolidationCadence {
  private stored: number | null = null;
  private owed: number | null = null;

  constructor(private readonly ctx: ConsolidationContext) {}

  /** Counts one more article about to be stored; true when consolidation is due after it. */
  async afterArticle(): Promise<boolean> {
    const every = this.ctx.config.link.consolidateEvery;
    this.stored = (await this.count()) + 1;
    return every > 0 && this.stored % every === 0;
  }

  /** The stored-article count of a pass owed by an earlier run, once per read from the store; null when none. */
  async takeOwed(): Promise<number | null> {
    await this.count();
    const owed = this.owed;
    this.owed = null;
    return owed;
  }

  /** Articles to store until the next pass is due (Infinity when never, or before the count is read). */
  untilDue(): number {
    const every = this.ctx.config.link.consolidateEvery;
    if (every <= 0 || this.stored === null) return Infinity;
    return every - (this.stored % every);
  }

  /** The count of the pass now due (after afterArticle returned true). */
  get at(): number {
    return this.stored ?? 0;
  }

  /** Forgets the count (after a failed commit it is read from the store again, with any pass owed). */
  reset(): void {
    this.stored = null;
  }

  private async count(): Promise<number> {
    if (this.stored !== null) return this.stored;
    const [counts, owed] = await Promise.all([this.ctx.store.counts(), this.ctx.store.consolidationOwed()]);
    this.stored = counts.articles;
    this.owed = this.ctx.config.link.consolidateEvery > 0 ? owed : null;
    return this.stored;
  }
}

/**
 * Consolidation over the events among `ids`: merges those that turn out to be one, then
 * splits those whose mentions drifted apart. Each merge and split is its own commit; when
 * `signal` aborts, the pass stops after the one in hand.
 */
export async function consolidate(
  ctx: ConsolidationContext,
  ids: readonly string[],
  storyIds: readonly string[],
  signal?: AbortSignal,
): Promise<ConsolidationOutcome> {
  const merges = await mergeEvents(ctx, ids, signal);
  const gone = new Set(merges.map((m) => m.from));
  const splits = signal?.aborted
    ? []
    : await splitEvents(
        ctx,
        ids.filter((id) => !gone.has(id)),
        signal,
      );
  const storyMerges = signal?.aborted ? [] : await mergeStoriesOf(ctx, storyIds, signal);
  const storiesGone = new Set(storyMerges.map((m) => m.from));
  const storySplits = signal?.aborted
    ? []
    : await splitStories(
        ctx,
        storyIds.filter((id) => !storiesGone.has(id)),
        signal,
      );
  return { merges, splits, storyMerges, storySplits };
}

/** Merges the stories among `ids` that turn out to be one thread; each merge is its own commit. */
async function mergeStoriesOf(ctx: ConsolidationContext, ids: readonly string[], signal?: AbortSignal): Promise<MergeOutcome[]> {
  const done: MergeOutcome[] = [];
  for (const m of ctx.stories.planMerges(ids)) {
    if (signal?.aborted) break;
    const merged = ctx.stories.mergedState(m.into, m.from);
    await ctx.store.commitStoryMerge({
      into: { record: storyRecord(merged), state: serialiseStory(merged) },
      from: m.from,
      score: m.score,
      at: ctx.now().toISOString(),
      messages: buildStoryMergeMessages(m, merged, ctx.now()),
    });
    ctx.stories.applyMerge(merged, m.from);
    done.push(m);
  }
  return done;
}

/**
 * Splits the stories among `ids` whose articles drifted into two threads; the events first
 * reported in the moved articles go with them. Stories with an erased article are left whole.
 */
async function splitStories(ctx: ConsolidationContext, ids: readonly string[], signal?: AbortSignal): Promise<StorySplitOutcome[]> {
  const done: StorySplitOutcome[] = [];
  // Stories examined and left whole: their marks are stored, so a restart examines the same.
  const unsplit: string[] = [];
  for (const id of ctx.stories.splitCandidates(ids)) {
    if (signal?.aborted) break;
    const members = await ctx.store.storyMembers(id);
    const plan = members.every((m) => m.vector !== null) ? ctx.stories.planSplit(id, members as StoryMemberInput[]) : null;
    if (!plan) {
      unsplit.push(id);
      continue;
    }
    const moved = new Set(plan.moved);
    const events: EventState[] = [];
    for (const e of ctx.linker.eventsInStory(id, (s) => ctx.stories.resolve(s))) {
      // An event goes with the article that first reported it.
      const first = (await ctx.store.linkedMentions(e.id))[0];
      if (first && moved.has(first.mention.articleId)) events.push(ctx.linker.movedState(e.id, plan.split.id));
    }
    await applyStoredLabels(ctx, events);
    await ctx.store.commitStorySplit({
      from: { record: storyRecord(plan.kept), state: serialiseStory(plan.kept) },
      into: { record: storyRecord(plan.split), state: serialiseStory(plan.split) },
      moved: plan.moved,
      events: events.map((e) => ({ record: toRecord(e), outlets: outletRows(e), state: serialiseEvent(e) })),
      score: plan.score,
      at: ctx.now().toISOString(),
      messages: buildStorySplitMessages(plan, ctx.now()),
    });
    ctx.stories.applySplit(plan);
    ctx.linker.applyMoves(events);
    done.push({ from: id, into: plan.split.id, score: plan.score, moved: plan.moved });
  }
  const marks = unsplit.map((id) => ctx.stories.story(id)).filter((s): s is StoryState => s !== undefined);
  await ctx.store.putStoryStates(marks.map((s) => ({ id: s.id, state: serialiseStory(s) })));
  if (done.length) ctx.logger.child({ stage: 'link' }).debug({ storySplits: done.length }, 'consolidation split stories');
  return done;
}

/** Splits the events among `ids` whose mentions drifted into two parts; events with erased mentions are left whole. */
async function splitEvents(ctx: ConsolidationContext, ids: readonly string[], signal?: AbortSignal): Promise<SplitOutcome[]> {
  const done: SplitOutcome[] = [];
  // Events examined and left whole: their marks are stored, so a restart examines the same.
  const unsplit: string[] = [];
  for (const id of ctx.linker.splitCandidates(ids)) {
    if (signal?.aborted) break;
    const linked = await ctx.store.linkedMentions(id);
    if (linked.some((l) => l.mention.vector === null)) {
      unsplit.push(id);
      continue;
    }
    const plan = ctx.linker.planSplit(
      id,
      linked.map((l) => ({ mention: l.mention as EmbeddedMention, rank: l.rank, refersBack: l.refersBack === true })),
    );
    // A sentence an analyst placed stays where it was put.
    if (!plan || plan.moved.some((m) => ctx.linker.isPinned(m))) {
      unsplit.push(id);
      continue;
    }
    await applyStoredLabels(ctx, [plan.kept]);
    // The store relabels the event left behind when its label sentence moved (commitSplit);
    // the notification says the same: its earliest remaining sentence, as listed.
    const moved = new Set(plan.moved.map((m) => `${m.articleId}#${m.sentenceIndex}`));
    const movedTexts = linked
      .filter((l) => moved.has(`${l.mention.articleId}#${l.mention.sentenceIndex}`))
      .map((l) => l.mention.text)
      .filter((t) => t !== '');
    plan.kept.label =
      relabelAfter(
        plan.kept.label,
        movedTexts,
        () => linked.find((l) => !moved.has(`${l.mention.articleId}#${l.mention.sentenceIndex}`) && l.mention.text !== '')?.mention.text,
      ) ?? plan.kept.label;
    await ctx.store.commitSplit({
      from: { record: toRecord(plan.kept), outlets: outletRows(plan.kept), state: serialiseEvent(plan.kept) },
      into: { record: toRecord(plan.split), outlets: outletRows(plan.split), state: serialiseEvent(plan.split) },
      moved: plan.moved,
      score: plan.score,
      at: ctx.now().toISOString(),
      messages: buildSplitMessages(plan, ctx.now()),
    });
    ctx.linker.applySplit(plan);
    done.push({ from: id, into: plan.split.id, score: plan.score, moved: plan.moved });
  }
  const marks = unsplit.map((id) => ctx.linker.event(id)).filter((e): e is EventState => e !== undefined);
  await ctx.store.putEventStates(marks.map((e) => ({ id: e.id, state: serialiseEvent(e) })));
  if (done.length) ctx.logger.child({ stage: 'link' }).debug({ splits: done.length }, 'consolidation split events');
  return done;
}

/** Merges the events among `ids` that turn out to be one; each merge is its own commit. */
async function mergeEvents(ctx: ConsolidationContext, ids: Iterable<string>, signal?: AbortSignal): Promise<MergeOutcome[]> {
  const done: MergeOutcome[] = [];
  for (const m of ctx.linker.planMerges(ids, ctx.config.link.mergeThreshold)) {
    if (signal?.aborted) break;
    const merged = ctx.linker.mergedState(m.into, m.from, await ctx.store.linkedToBoth(m.into, m.from));
    await applyStoredLabels(ctx, [merged]);
    const at = ctx.now().toISOString();
    await ctx.store.commitMerge({
      into: { record: toRecord(merged), outlets: outletRows(merged), state: serialiseEvent(merged) },
      from: m.from,
      score: m.score,
      at,
      messages: buildMergeMessages(m, merged, ctx.now()),
    });
    ctx.linker.applyMerge(merged, m.from);
    done.push(m);
  }
  if (done.length) ctx.logger.child({ stage: 'link' }).debug({ merges: done.length }, 'consolidation merged events');
  return done;
}

/**
 * Gives events the labels the store holds, before they are notified: an erasure may have
 * relabelled an event since the linker read it, and a notification must not carry erased
 * text. The states are the linker's own, so its memory is brought up to date as well.
 */
export async function applyStoredLabels(ctx: ConsolidationContext, events: readonly EventState[]): Promise<void> {
  // Every change is notified (the live stream carries what no subscriber asked for).
  if (events.length === 0) return;
  const labels = await ctx.store.eventLabels([...new Set(events.map((e) => e.id))]);
  for (const e of events) {
    const label = labels.get(e.id);
    if (label !== undefined) e.label = label;
  }
}
