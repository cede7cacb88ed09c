/**
 * Analysts' corrections: merge two events, split some mentions off into a new event, move
 * mentions to another event, detach one into an event of its own, merge two stories, divide
 * one, move the link threshold (an operator's adjustment, fitted to reviewed links or set by
 * hand), and undo any of them.
 * Each runs in the linker's turn (it changes the linker's memory as well as the store), is
 * one commit with its audit record and its notification, and binds the linker afterwards:
 * events a correction set apart are never merged again by consolidation, and sentences it
 * placed are never moved by consolidation's splits. The record keeps the touched events and
 * the touched sentences' links as they were and as they became (without text: a label is
 * named by the sentence it is drawn from), which is what an undo writes back.
 */
import { randomBytes } from 'node:crypto';
import { StrandError } from '../errors.js';
import { buildCorrectionMessages } from '../notify/messages.js';
import type { EmbeddedMention, Link, LinkEvidence } from '../records.js';
import type {
  CorrectionImage,
  CorrectionRecord,
  Corrections,
  EventUpdate,
  ImageEvent,
  LinkedMention,
  SentenceKey,
  Store,
  ThresholdMove,
} from '../store/store.js';
import { applyStoredLabels, type ConsolidationContext } from './consolidate.js';
import {
  addMention,
  cloneEvent,
  deserialiseEvent,
  type EventState,
  linkWeight,
  openEvent,
  outletRows,
  serialiseEvent,
  toRecord,
} from './event-state.js';
import { ERASED_LABEL, labelFrom, relabelAfter } from './labels.js';
import { splitEventId } from './split-event.js';
import { splitStoryId, storyOf } from './split-story.js';
import { deserialiseStory, serialiseStory, type StoryState, storyRecord } from './story-state.js';

/** What an analyst asks for. */
export type CorrectionRequest =
  | { kind: 'merge'; from: string; into: string }
  | { kind: 'move'; from: string; to: string; mentions: SentenceKey[] }
  | { kind: 'split'; from: string; mentions: SentenceKey[] }
  | { kind: 'detach'; from: string; mentions: SentenceKey[] }
  | { kind: 'merge-stories'; from: string; into: string }
  | { kind: 'split-story'; from: string; articles: string[] }
  | {
      kind: 'threshold';
      /** The adjustment to set, or with `relative` the move to add to the one in effect (a round's fit is measured from it). */
      offset: number;
      relative?: boolean;
      round: string | null;
      heldOutF1: ThresholdMove['heldOutF1'];
    }
  | { kind: 'undo'; correction: string };

/** What the standing corrections bind the linker to: their pairs and sentences, and the threshold adjustment in effect. */
export type ActiveBinds = CorrectionRecord['binds'] & { thresholdOffset: number };

/** How far an adjustment may move the configured threshold, and where the result must stay. */
export const MAX_THRESHOLD_OFFSET = 0.5;
const THRESHOLD_RANGE = [0.01, 0.99] as const;

/** Who asks, and why. */
export interface CorrectionAuthor {
  by: string;
  note: string | null;
}

const key = (k: SentenceKey): string => `${k.articleId}#${k.sentenceIndex}`;

/** Applies one correction (in the linker's turn); returns its record as the audit log keeps it. */
export async function applyCorrection(
  ctx: ConsolidationContext,
  req: CorrectionRequest,
  author: CorrectionAuthor,
): Promise<CorrectionRecord> {
  if (req.kind === 'merge-stories') return bound(ctx, await mergeStories(ctx, req.from, req.into, author));
  if (req.kind === 'split-story') return bound(ctx, await splitStory(ctx, req.from, req.articles, author));
  if (req.kind === 'threshold') return bound(ctx, await moveThreshold(ctx, req, author));
  let outcome: Planned;
  if (req.kind === 'undo') {
    const r = await ctx.store.getCorrection(req.correction);
    if (!r) throw new StrandError('STRAND_NOT_FOUND', `no correction ${req.correction}`);
    if (r.kind === 'undo') throw conflict(`${r.id} is an undo; make the correction again instead`);
    if (r.undoneBy) throw conflict(`${r.id} was undone already (by ${r.undoneBy})`);
    if (r.kind === 'merge-stories') return bound(ctx, await unmergeStories(ctx, r, author));
    if (r.kind === 'split-story') return bound(ctx, await unsplitStory(ctx, r, author));
    if (r.kind === 'threshold') return bound(ctx, await unmoveThreshold(ctx, r, author));
    outcome = await planUndo(ctx, r, author);
  } else {
    outcome = await planChange(ctx, req, author);
  }
  await ctx.store.commitCorrection({
    record: outcome.record,
    sentences: outcome.sentences,
    links: outcome.record.after.links,
    events: outcome.written.map(update),
    removed: outcome.removed,
    messages: buildCorrectionMessages(outcome.record, outcome.written.map(toRecord), ctx.now()),
  });
  ctx.linker.applyCorrection(outcome.written, outcome.removed);
  return bound(ctx, outcome.record);
}

/** Reads the bindings again after a correction and hands them to the linkers; returns the record. */
async function bound(ctx: ConsolidationContext, record: CorrectionRecord): Promise<CorrectionRecord> {
  applyBinds(ctx.linker, ctx.stories, await activeBinds(ctx.store));
  return record;
}

/** Hands the bindings to the event linker (event pairs, sentences, threshold adjustment) and the story linker (story pairs). */
export function applyBinds(
  linker: Pick<ConsolidationContext['linker'], 'setBinds' | 'setThresholdOffset'>,
  stories: Pick<ConsolidationContext['stories'], 'setApart'>,
  binds: ActiveBinds,
): void {
  linker.setBinds(
    binds.apart.filter(([a]) => a.startsWith('ev_')),
    binds.pinned,
  );
  linker.setThresholdOffset(binds.thresholdOffset);
  stories.setApart(binds.apart.filter(([a]) => a.startsWith('st_')));
}

/**
 * An operator's move of the link threshold: a record in the corrections log (who, when,
 * why, from which review round), in effect from the next sentence linked. Nothing already
 * linked changes; undoing it puts back the adjustment in effect before (the newest one
 * still standing).
 */
async function moveThreshold(
  ctx: ConsolidationContext,
  req: Extract<CorrectionRequest, { kind: 'threshold' }>,
  author: CorrectionAuthor,
): Promise<CorrectionRecord> {
  const configured = ctx.config.link.threshold;
  const [low, high] = THRESHOLD_RANGE;
  if (!Number.isFinite(req.offset) || Math.abs(req.offset) > MAX_THRESHOLD_OFFSET)
    throw invalid(`a threshold adjustment moves the configured threshold by at most ${MAX_THRESHOLD_OFFSET} either way`);
  const from = ctx.linker.thresholdAdjustment;
  const to = Math.round((req.relative ? from + req.offset : req.offset) * 1e4) / 1e4;
  if (Math.abs(to) > MAX_THRESHOLD_OFFSET || configured + to < low || configured + to > high)
    throw invalid(
      `the configured threshold ${configured} moved by ${to} leaves ${low}..${high} or moves more than ${MAX_THRESHOLD_OFFSET}`,
    );
  if (to === from) throw conflict(`an adjustment of ${to} is in effect already`);
  const record = thresholdRecord(ctx, author, { from, to, round: req.round, heldOutF1: req.heldOutF1 });
  await ctx.store.commitCorrection({ record, sentences: [], links: [], events: [], removed: [], messages: [] });
  return record;
}

/** Undoing a threshold move: the newest adjustment still standing after it is the one in effect. */
async function unmoveThreshold(ctx: ConsolidationContext, r: CorrectionRecord, author: CorrectionAuthor): Promise<CorrectionRecord> {
  const from = ctx.linker.thresholdAdjustment;
  const to = (await activeBinds(ctx.store, r.id)).thresholdOffset;
  const record: CorrectionRecord = {
    ...thresholdRecord(ctx, author, { from, to, round: r.threshold?.round ?? null, heldOutF1: null }),
    kind: 'undo',
    undoes: r.id,
  };
  await ctx.store.commitCorrection({ record, sentences: [], links: [], events: [], removed: [], messages: [] });
  return record;
}

function thresholdRecord(ctx: ConsolidationContext, author: CorrectionAuthor, move: ThresholdMove): CorrectionRecord {
  const none: CorrectionImage = { events: {}, links: [] };
  return {
    id: `cr_${randomBytes(6).toString('hex')}`,
    kind: 'threshold',
    by: author.by,
    at: ctx.now().toISOString(),
    note: author.note,
    events: [],
    mentions: [],
    undoes: null,
    undoneBy: null,
    before: none,
    after: none,
    binds: { apart: [], pinned: [] },
    threshold: move,
  };
}

/** An analyst's merge of two stories, through the store's story merge with its record. */
async function mergeStories(
  ctx: ConsolidationContext,
  fromId: string,
  intoId: string,
  author: CorrectionAuthor,
): Promise<CorrectionRecord> {
  if (fromId === intoId) throw invalid('a story cannot be merged into itself');
  const [from, into] = [ctx.stories.story(fromId), ctx.stories.story(intoId)];
  if (!from || !into) throw new StrandError('STRAND_NOT_FOUND', `no story ${from ? intoId : fromId} (merged away, or never stored)`);
  const detail = await ctx.store.getStory(fromId);
  const members = {
    articles: (await ctx.store.storyMembers(fromId)).map((m) => m.articleId),
    events: detail?.events.map((e) => e.id) ?? [],
    earlier: detail?.merges.map((m) => m.from) ?? [],
  };
  const merged = ctx.stories.mergedState(intoId, fromId);
  const id = `cr_${randomBytes(6).toString('hex')}`;
  const record: CorrectionRecord = {
    id,
    kind: 'merge-stories',
    by: author.by,
    at: ctx.now().toISOString(),
    note: author.note,
    events: [fromId, intoId],
    mentions: [],
    undoes: null,
    undoneBy: null,
    before: { events: {}, links: [], stories: { [fromId]: storyImage(from), [intoId]: storyImage(into) }, members },
    after: { events: {}, links: [], stories: { [fromId]: null, [intoId]: storyImage(merged) }, members },
    binds: { apart: [], pinned: [] },
  };
  await ctx.store.commitStoryMerge({
    into: { record: storyRecord(merged), state: serialiseStory(merged) },
    from: fromId,
    score: 1,
    at: record.at,
    messages: buildCorrectionMessages(record, [], ctx.now(), storyRecord(merged)),
    correction: record,
  });
  ctx.stories.applyMerge(merged, fromId);
  return record;
}

/** An analyst's division of a story: the given articles, and the events first reported in them, make a new story. */
async function splitStory(
  ctx: ConsolidationContext,
  fromId: string,
  articles: readonly string[],
  author: CorrectionAuthor,
): Promise<CorrectionRecord> {
  const story = ctx.stories.story(fromId);
  if (!story) throw new StrandError('STRAND_NOT_FOUND', `no story ${fromId} (merged away, or never stored)`);
  const members = await ctx.store.storyMembers(fromId);
  const wanted = new Set(articles);
  if (wanted.size !== articles.length) throw invalid('an article is named twice');
  const moving = members.filter((m) => wanted.has(m.articleId));
  const missing = articles.filter((a) => !moving.some((m) => m.articleId === a));
  if (missing.length) throw invalid(`not filed under ${fromId}: ${missing.join(', ')}`);
  if (moving.length === members.length) throw invalid(`that is every article of ${fromId}`);
  if (members.some((m) => m.vector === null))
    throw conflict(`an article of ${fromId} has had its text erased; the story can no longer be divided`);
  const input = (ms: typeof members) => ms.map((m) => ({ ...m, vector: m.vector! }));
  const kept = storyOf(fromId, input(members.filter((m) => !wanted.has(m.articleId))), ctx.config.link.centroidTerms);
  kept.label = story.label;
  kept.version = story.version + 1;
  const split = storyOf(splitStoryId(fromId, moving[0]!.articleId), input(moving), ctx.config.link.centroidTerms);
  if (ctx.stories.story(split.id)) throw conflict(`${split.id} exists already (the same articles were split off before)`);
  // An event goes with the article that first reported it.
  const events: EventState[] = [];
  const eventsBefore: EventState[] = [];
  for (const e of ctx.linker.eventsInStory(fromId, (x) => ctx.stories.resolve(x))) {
    const first = (await ctx.store.linkedMentions(e.id))[0];
    if (first && wanted.has(first.mention.articleId)) {
      eventsBefore.push(e);
      events.push(ctx.linker.movedState(e.id, split.id));
    }
  }
  await applyStoredLabels(ctx, events);
  const none = new Map<string, string>();
  const record: CorrectionRecord = {
    id: `cr_${randomBytes(6).toString('hex')}`,
    kind: 'split-story',
    by: author.by,
    at: ctx.now().toISOString(),
    note: author.note,
    events: [fromId, split.id],
    mentions: [],
    undoes: null,
    undoneBy: null,
    before: {
      events: Object.fromEntries(eventsBefore.map((e) => [e.id, image(e, none)])),
      links: [],
      stories: { [fromId]: storyImage(story), [split.id]: null },
      members: { articles: [...articles], events: events.map((e) => e.id), earlier: [] },
    },
    after: {
      events: Object.fromEntries(events.map((e) => [e.id, image(e, none)])),
      links: [],
      stories: { [fromId]: storyImage(kept), [split.id]: storyImage(split) },
      members: { articles: [...articles], events: events.map((e) => e.id), earlier: [] },
    },
    binds: { apart: [[fromId, split.id]], pinned: [] },
  };
  await ctx.store.commitStorySplit({
    from: { record: storyRecord(kept), state: serialiseStory(kept) },
    into: { record: storyRecord(split), state: serialiseStory(split) },
    moved: moving.map((m) => m.articleId),
    events: events.map(update),
    score: 0,
    at: record.at,
    messages: buildCorrectionMessages(record, [], ctx.now(), storyRecord(split)),
    correction: record,
  });
  ctx.stories.applySplit({ kept, split, moved: moving.map((m) => m.articleId), score: 0 });
  ctx.linker.applyMoves(events);
  return record;
}

/** The undo of an analyst's story split: the articles and events back, the new story gone. */
async function unsplitStory(ctx: ConsolidationContext, r: CorrectionRecord, author: CorrectionAuthor): Promise<CorrectionRecord> {
  const [fromId, intoId] = r.events as [string, string];
  const after = r.after.stories ?? {};
  for (const id of [fromId, intoId])
    if (ctx.stories.story(id)?.version !== after[id]?.record.version)
      throw conflict(`${id} changed since ${r.id} (new articles, or consolidation); undoing would lose that`);
  for (const [id, img] of Object.entries(r.after.events))
    if (ctx.linker.event(id)?.version !== img?.record.version) throw conflict(`${id} changed since ${r.id}; undoing would lose that`);
  const from = deserialiseStory(Buffer.from(r.before.stories![fromId]!.state, 'base64'));
  const events = Object.values(r.before.events)
    .filter((img): img is ImageEvent => img !== null)
    .map((img) => deserialiseEvent(Buffer.from(img.state, 'base64')));
  await applyStoredLabels(ctx, events);
  const record = undoRecord(ctx, r, author, { apart: [], pinned: [] });
  await ctx.store.commitStoryUnsplit({
    from: { record: storyRecord(from), state: serialiseStory(from) },
    into: intoId,
    moved: r.before.members?.articles ?? [],
    events: events.map(update),
    correction: record,
    messages: buildCorrectionMessages(record, [], ctx.now(), storyRecord(from)),
  });
  ctx.stories.applyUnsplit(from, intoId);
  ctx.linker.applyMoves(events);
  return record;
}

/** The undo of an analyst's story merge: the absorbed story back as it was, the survivor too. */
async function unmergeStories(ctx: ConsolidationContext, r: CorrectionRecord, author: CorrectionAuthor): Promise<CorrectionRecord> {
  const [fromId, intoId] = r.events as [string, string];
  const before = r.before.stories ?? {};
  const now = ctx.stories.story(intoId);
  if (ctx.stories.story(fromId) || now?.version !== r.after.stories?.[intoId]?.record.version)
    throw conflict(`${intoId} changed since ${r.id} (new articles, or consolidation); undoing would lose that`);
  const from = deserialiseStory(Buffer.from(before[fromId]!.state, 'base64'));
  const into = deserialiseStory(Buffer.from(before[intoId]!.state, 'base64'));
  // Undoing a merge says the two are two: consolidation does not merge them again.
  const record = undoRecord(ctx, r, author, { apart: [[fromId, intoId]], pinned: [] });
  const members = r.before.members ?? { articles: [], events: [], earlier: [] };
  await ctx.store.commitStoryUnmerge({
    from: { record: storyRecord(from), state: serialiseStory(from) },
    into: { record: storyRecord(into), state: serialiseStory(into) },
    ...members,
    correction: record,
    messages: buildCorrectionMessages(record, [], ctx.now(), storyRecord(from)),
  });
  ctx.stories.applyUnmerge(from, into);
  return record;
}

/**
 * What every correction that stands binds the linker to (read at start and after each
 * correction); an event since merged away is bound as the event it went into.
 */
export async function activeBinds(
  store: Pick<Corrections, 'listCorrections'> & Pick<Store, 'mergedInto' | 'storyMergedInto'>,
  /** A correction to count as undone (the one an undo in progress takes back). */
  except?: string,
): Promise<ActiveBinds> {
  const apart: [string, string][] = [];
  const pinned: SentenceKey[] = [];
  let thresholdOffset: number | null = null;
  const PAGE = 500;
  const now = async (id: string) => (id.startsWith('st_') ? await store.storyMergedInto(id) : await store.mergedInto(id)) ?? id;
  for (let offset = 0; ; offset += PAGE) {
    const { corrections } = await store.listCorrections(PAGE, offset);
    for (const c of corrections) {
      if (c.undoneBy !== null || c.id === except) continue;
      // Newest first: the first threshold move still standing is the one in effect.
      if (c.kind === 'threshold' && thresholdOffset === null) thresholdOffset = c.threshold?.to ?? 0;
      for (const [a, b] of c.binds.apart) apart.push([await now(a), await now(b)]);
      pinned.push(...c.binds.pinned);
    }
    if (corrections.length < PAGE) return { apart, pinned, thresholdOffset: thresholdOffset ?? 0 };
  }
}

interface Planned {
  record: CorrectionRecord;
  sentences: SentenceKey[];
  written: EventState[];
  removed: string[];
}

async function planChange(
  ctx: ConsolidationContext,
  req: Exclude<CorrectionRequest, { kind: 'undo' | 'merge-stories' | 'split-story' | 'threshold' }>,
  author: CorrectionAuthor,
): Promise<Planned> {
  const id = `cr_${randomBytes(6).toString('hex')}`;
  const from = known(ctx, req.from);
  const linked = await ctx.store.linkedMentions(from.id);
  let moving: LinkedMention[];
  let toId: string;
  if (req.kind === 'merge') {
    if (req.into === req.from) throw invalid('an event cannot be merged into itself');
    toId = known(ctx, req.into).id;
    moving = linked;
  } else {
    const wanted = new Set(req.mentions.map(key));
    if (wanted.size !== req.mentions.length) throw invalid('a sentence is named twice');
    if (req.kind === 'detach' && wanted.size !== 1) throw invalid('detach takes one sentence');
    moving = linked.filter((l) => wanted.has(key(l.mention)));
    const missing = [...wanted].filter((k) => !moving.some((l) => key(l.mention) === k));
    if (missing.length) throw invalid(`not linked to ${from.id}: ${missing.join(', ')}`);
    if (moving.length === linked.length) throw invalid(`that is every sentence of ${from.id}: merge it instead`);
    if (req.kind === 'move') {
      if (req.to === req.from) throw invalid('the sentences are already there');
      toId = known(ctx, req.to).id;
    } else {
      toId = splitEventId(from.id, moving[0]!.mention);
      if (ctx.linker.event(toId)) throw conflict(`${toId} exists already (the same sentences were split off before)`);
    }
  }
  if (req.kind !== 'merge' && moving.some((l) => l.mention.vector === null))
    throw conflict('a sentence to move has had its text erased; its place in an event can no longer be computed');

  const to = ctx.linker.event(toId);
  const toLinked = to ? await ctx.store.linkedMentions(toId) : [];
  // Labels as the store holds them (an erasure may have relabelled since the linker read them).
  const [fromNow, toNow] = [cloneEvent(from), to ? cloneEvent(to) : undefined];
  await applyStoredLabels(ctx, toNow ? [fromNow, toNow] : [fromNow]);

  const sentences = moving.map((l) => ({ articleId: l.mention.articleId, sentenceIndex: l.mention.sentenceIndex }));
  const beforeLinks = await linksOf(ctx.store, sentences);
  // Sentences an analyst places report the event they are put in: a back-reference moved
  // becomes an ordinary link and weighs as one. A merge moves links as they are.
  const placed = req.kind !== 'merge';
  if (placed) moving = moving.map((l) => ({ ...l, refersBack: false }));
  const afterLinks = relinked(beforeLinks, from.id, toId, id, placed);
  const movedKeys = new Set(moving.map((l) => key(l.mention)));
  const remaining = linked.filter((l) => !movedKeys.has(key(l.mention)));

  let written: EventState[];
  let removed: string[] = [];
  if (req.kind === 'merge') {
    const merged = ctx.linker.mergedState(toId, from.id, await ctx.store.linkedToBoth(toId, from.id));
    merged.label = toNow!.label;
    merged.version = Math.max(from.version, to!.version) + 1;
    written = [merged];
    removed = [from.id];
  } else {
    const kept = rebuilt(ctx, from, remaining);
    const movedTexts = moving.map((l) => l.mention.text).filter((t) => t !== '');
    kept.label = relabelAfter(fromNow.label, movedTexts, () => remaining.find((l) => l.mention.text !== '')?.mention.text) ?? fromNow.label;
    let target: EventState;
    if (to) {
      target = cloneEvent(to);
      for (const l of moving) addMention(target, l.mention as EmbeddedMention, linkWeight(l), ctx.config.link.centroidTerms);
      target.label = toNow!.label;
      target.version = to.version + 1;
    } else {
      target = rebuilt(ctx, { ...from, id: toId, version: -1 }, moving);
      target.splitCheckedAt = target.mentionCount;
      target.label = moving[0]!.mention.text ? labelFrom(moving[0]!.mention.text) : ERASED_LABEL;
    }
    written = [kept, target];
  }
  for (const e of written) ctx.linker.stamp(e);

  const textOf = new Map([...linked, ...toLinked].map((l) => [key(l.mention), l.mention.text]));
  const before: CorrectionImage = {
    events: { [from.id]: image(fromNow, textOf), [toId]: toNow ? image(toNow, textOf) : null },
    links: beforeLinks,
  };
  const after: CorrectionImage = {
    events: Object.fromEntries([...written.map((e) => [e.id, image(e, textOf)] as const), ...removed.map((r) => [r, null] as const)]),
    links: afterLinks,
  };
  const binds: CorrectionRecord['binds'] =
    req.kind === 'merge' ? { apart: [], pinned: [] } : { apart: [[from.id, toId]], pinned: sentences };
  return {
    record: {
      id,
      kind: req.kind,
      by: author.by,
      at: ctx.now().toISOString(),
      note: author.note,
      events: [from.id, toId],
      mentions: req.kind === 'merge' ? [] : sentences,
      undoes: null,
      undoneBy: null,
      before,
      after,
      binds,
    },
    sentences,
    written,
    removed,
  };
}

async function planUndo(ctx: ConsolidationContext, r: CorrectionRecord, author: CorrectionAuthor): Promise<Planned> {
  // Only what the correction left may be put back: a later change would be lost.
  for (const [id, img] of Object.entries(r.after.events)) {
    const now = ctx.linker.event(id);
    if (img === null ? now !== undefined : now?.version !== img.record.version)
      throw conflict(`${id} changed since ${r.id} (new sentences, or consolidation); undoing would lose that`);
  }
  const sentences = uniqueSentences([...r.before.links, ...r.after.links, ...r.mentions]);
  const current = await linksOf(ctx.store, sentences);
  if (!sameLinks(current, r.after.links)) throw conflict(`the links of the sentences ${r.id} touched changed since`);

  const written: EventState[] = [];
  const removed: string[] = [];
  const texts = await sentenceTexts(ctx.store, r.before.events);
  for (const [id, img] of Object.entries(r.before.events)) {
    if (img === null) {
      if (ctx.linker.event(id)) removed.push(id);
      continue;
    }
    const e = deserialiseEvent(Buffer.from(img.state, 'base64'));
    const source = img.labelFrom ? texts.get(key(img.labelFrom)) : undefined;
    e.label = source ? labelFrom(source) : ERASED_LABEL;
    written.push(e);
  }
  const [a, b] = r.events as [string, string];
  return {
    // Undoing a merge says the two are two: consolidation does not merge them again.
    record: undoRecord(ctx, r, author, r.kind === 'merge' ? { apart: [[a, b]], pinned: [] } : { apart: [], pinned: [] }),
    sentences,
    written,
    removed,
  };
}

/** The record of an undo: the correction's images the other way round, and what the undo binds. */
function undoRecord(
  ctx: ConsolidationContext,
  r: CorrectionRecord,
  author: CorrectionAuthor,
  binds: CorrectionRecord['binds'],
): CorrectionRecord {
  return {
    ...r,
    id: `cr_${randomBytes(6).toString('hex')}`,
    kind: 'undo',
    by: author.by,
    at: ctx.now().toISOString(),
    note: author.note,
    undoes: r.id,
    undoneBy: null,
    before: r.after,
    after: r.before,
    binds,
  };
}

/** A story in a record: its public record and its state, base64. */
function storyImage(st: StoryState): { record: ReturnType<typeof storyRecord>; state: string } {
  return { record: storyRecord(st), state: Buffer.from(serialiseStory(st)).toString('base64') };
}

function known(ctx: ConsolidationContext, id: string): EventState {
  const e = ctx.linker.event(id);
  if (!e) throw new StrandError('STRAND_NOT_FOUND', `no event ${id} (merged away, or never stored)`);
  return e;
}

/** An event rebuilt from its members, oldest first, keeping its id, story and examination mark. */
function rebuilt(ctx: ConsolidationContext, like: EventState, members: readonly LinkedMention[]): EventState {
  const e = openEvent(like.id, members[0]!.mention as EmbeddedMention);
  e.story = like.story;
  for (const m of members) addMention(e, m.mention as EmbeddedMention, linkWeight(m), ctx.config.link.centroidTerms);
  e.version = like.version + 1;
  e.splitCheckedAt = like.splitCheckedAt;
  return e;
}

/**
 * The links after moving a sentence's link to `from` onto `to`: a sentence already linked
 * to `to` keeps the better-scoring of its two links. The moved link says who moved it.
 */
function relinked(links: readonly Link[], from: string, to: string, correction: string, placed: boolean): Link[] {
  const out = new Map<string, Link>();
  for (const l of links) {
    const moved = l.eventId === from ? { ...l, eventId: to, evidence: movedEvidence(l.evidence, correction, placed) } : l;
    const k = `${key(l)}\n${moved.eventId}`;
    const have = out.get(k);
    if (!have || moved.score > have.score) out.set(k, moved);
  }
  return [...out.values()];
}

/** A moved link's evidence: who moved it; a placed sentence's link is no back-reference any more. */
function movedEvidence(evidence: LinkEvidence, correction: string, placed: boolean): LinkEvidence {
  const { refersBack, ...rest } = evidence;
  return { ...rest, correctedBy: correction, ...(refersBack && !placed ? { refersBack } : {}) };
}

/** Every link of these sentences, as stored. */
async function linksOf(store: Pick<Store, 'getArticle'>, sentences: readonly SentenceKey[]): Promise<Link[]> {
  const out: Link[] = [];
  const byArticle = new Map<string, number[]>();
  for (const s of sentences) byArticle.set(s.articleId, [...(byArticle.get(s.articleId) ?? []), s.sentenceIndex]);
  for (const [articleId, indexes] of byArticle) {
    const detail = await store.getArticle(articleId);
    for (const i of indexes) {
      for (const l of detail?.sentences.find((s) => s.index === i)?.links ?? [])
        out.push({ articleId, sentenceIndex: i, eventId: l.eventId, score: l.score, rank: l.rank, evidence: l.evidence });
    }
  }
  return out.sort(byLink);
}

/** The texts of the sentences the images' labels are drawn from, as stored now (erased ones absent). */
async function sentenceTexts(store: Pick<Store, 'getArticle'>, events: CorrectionImage['events']): Promise<Map<string, string>> {
  const out = new Map<string, string>();
  for (const img of Object.values(events)) {
    if (!img?.labelFrom) continue;
    const text = (await store.getArticle(img.labelFrom.articleId))?.sentences.find((s) => s.index === img.labelFrom!.sentenceIndex)?.text;
    if (text) out.set(key(img.labelFrom), text);
  }
  return out;
}

function sameLinks(a: readonly Link[], b: readonly Link[]): boolean {
  const form = (ls: readonly Link[]) =>
    JSON.stringify([...ls].sort(byLink).map((l) => [l.articleId, l.sentenceIndex, l.eventId, l.rank, l.score]));
  return form(a) === form(b);
}

function byLink(a: Link, b: Link): number {
  return a.articleId < b.articleId
    ? -1
    : a.articleId > b.articleId
      ? 1
      : a.sentenceIndex - b.sentenceIndex || (a.eventId < b.eventId ? -1 : 1);
}

function uniqueSentences(ks: readonly SentenceKey[]): SentenceKey[] {
  const seen = new Map<string, SentenceKey>();
  for (const k of ks) seen.set(key(k), { articleId: k.articleId, sentenceIndex: k.sentenceIndex });
  return [...seen.values()];
}

/** An event in a record: no label text, only the sentence it came from. */
function image(e: EventState, textOf: ReadonlyMap<string, string>): ImageEvent {
  const { label: _label, ...record } = toRecord(e);
  let source: SentenceKey | null = null;
  for (const [k, t] of textOf) {
    if (t && labelFrom(t) === e.label) {
      const cut = k.lastIndexOf('#');
      source = { articleId: k.slice(0, cut), sentenceIndex: Number(k.slice(cut + 1)) };
      break;
    }
  }
  return { record, labelFrom: source, outlets: outletRows(e), state: Buffer.from(serialiseEvent(e)).toString('base64') };
}

function update(e: EventState): EventUpdate {
  return { record: toRecord(e), outlets: outletRows(e), state: serialiseEvent(e) };
}

function invalid(message: string): StrandError {
  return new StrandError('STRAND_REQUEST_INVALID', message);
}

function conflict(message: string): StrandError {
  return new StrandError('STRAND_CORRECTION_CONFLICT', message);
}
