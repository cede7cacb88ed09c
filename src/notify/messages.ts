/**
 * Builds the notifications a link plan gives rise to, as outbox messages: "event.opened"
 * when a mention opens an event, "event.outlet_added" when an event is reported by an
 * outlet for the first time, "article.linked" when an article reports known events again
 * (their counts), "event.cross_story_link" when a sentence's best link is to an event of
 * another story. Payloads follow the Standard Webhooks recommendation
 * (`type`, `timestamp`, `data`); ids are derived from the change, so a replayed change
 * produces the same `webhook-id` and receivers can drop the repeat.
 */
import { createHash } from 'node:crypto';
import type { LinkPlan, MergePlan } from '../link/online-linker.js';
import type { SplitPlan } from '../link/split-event.js';
import type { StorySplitPlan } from '../link/split-story.js';
import { type EventState, toRecord } from '../link/event-state.js';
import type { Article, EmbeddedMention, EventRecord } from '../records.js';
import type { StoryMergePlan, StoryPlan } from '../link/story-linker.js';
import { type StoryRecord, type StoryState, storyRecord } from '../link/story-state.js';
import type { CorrectionRecord, OutboxMessage } from '../store/store.js';

export { NOTIFICATION_TYPES, type NotificationType } from './notification-types.js';
import type { NotificationType } from './notification-types.js';

/** The outbox messages for one committed plan (every change is logged; subscriptions' rules select from the log). */
export function buildMessages(plan: LinkPlan, mentions: readonly EmbeddedMention[], now: Date): OutboxMessage[] {
  const events = new Map(plan.events.map((e) => [e.id, e]));
  const mentionOf = (articleId: string, sentenceIndex: number) =>
    mentions.find((m) => m.articleId === articleId && m.sentenceIndex === sentenceIndex);
  const out: OutboxMessage[] = [];
  const push = messageSink(out, now);
  for (const id of plan.opened) {
    const link = plan.links.find((l) => l.eventId === id)!;
    const m = mentionOf(link.articleId, link.sentenceIndex);
    push('event.opened', id, {
      event: toRecord(events.get(id)!),
      mention: { article: link.articleId, sentence: link.sentenceIndex, outlet: m?.outlet, text: m?.text, published: m?.published },
      note: 'Automatic link: a machine suggestion to verify before publishing or acting on it.',
    });
  }
  for (const a of plan.outletsAdded) {
    const m = mentionOf(a.articleId, a.sentenceIndex);
    const link = plan.links.find((l) => l.eventId === a.eventId && l.articleId === a.articleId && l.sentenceIndex === a.sentenceIndex);
    const event = events.get(a.eventId)!;
    push('event.outlet_added', `${a.eventId}\n${a.outlet}`, {
      event: toRecord(event),
      outlet: a.outlet,
      independent: a.independent,
      // Outlets with a report that is not a copy of another's, this one included.
      independentOutlets: [...event.outlets.values()].filter(([, independent]) => independent > 0).length,
      mention: {
        article: a.articleId,
        sentence: a.sentenceIndex,
        text: m?.text,
        published: m?.published,
        score: a.score,
        evidence: link?.evidence,
      },
      note: 'Automatic link: a machine suggestion to verify before publishing or acting on it.',
    });
  }
  // The known events this article reported again, with their counts (no text: one small
  // message per article, for alert rules on growth and for pages that show counts live).
  const article = plan.links[0]?.articleId;
  const grew = plan.events.flatMap((e) => {
    // Back-references are not counted among an event's mentions (linkWeight).
    const added = plan.opened.includes(e.id) ? 0 : plan.links.filter((l) => l.eventId === e.id && !l.evidence.refersBack).length;
    return added ? [{ id: e.id, story: e.story, firstSeen: e.firstSeen, mentionCount: e.mentionCount, mentionsAdded: added }] : [];
  });
  if (article !== undefined && grew.length > 0) {
    const m = mentions.find((x) => x.articleId === article);
    push('article.linked', article, { article: { article, outlet: m?.outlet, published: m?.published }, events: grew });
  }
  // A sentence linked to an event of another story: the rare links that tie two threads.
  for (const link of plan.links) {
    const event = events.get(link.eventId);
    if (!link.evidence.crossStory || link.rank > 0 || !event || plan.opened.includes(link.eventId)) continue;
    const m = mentionOf(link.articleId, link.sentenceIndex);
    push('event.cross_story_link', `${link.eventId}\n${link.articleId}\n${link.sentenceIndex}`, {
      event: toRecord(event),
      mention: {
        article: link.articleId,
        sentence: link.sentenceIndex,
        outlet: m?.outlet,
        text: m?.text,
        published: m?.published,
        score: link.score,
        evidence: link.evidence,
      },
      note: 'Automatic link: a machine suggestion to verify before publishing or acting on it.',
    });
  }
  return out;
}

/** The "event.split" notification for one consolidation split: both events as they now stand. */
export function buildSplitMessages(p: SplitPlan, now: Date): OutboxMessage[] {
  const out: OutboxMessage[] = [];
  messageSink(out, now)('event.split', `${p.kept.id}\n${p.split.id}`, {
    event: toRecord(p.kept),
    splitOff: toRecord(p.split),
    moved: p.moved.map((m) => ({ article: m.articleId, sentence: m.sentenceIndex })),
    score: p.score,
    note: 'Automatic consolidation: a machine suggestion to verify before publishing or acting on it.',
  });
  return out;
}

/**
 * "story.opened" when an article opens a story, "story.outlet_added" when an outlet reports
 * on a story for the first time (`independent` false for a copy of another article).
 */
export function buildStoryMessages(p: StoryPlan, article: Article, now: Date): OutboxMessage[] {
  const out: OutboxMessage[] = [];
  const push = messageSink(out, now);
  const about = { article: article.id, title: article.title, outlet: article.outlet, url: article.url, published: article.published };
  if (p.opened) push('story.opened', p.story.id, { story: storyRecord(p.story), article: about, note: STORY_NOTE });
  if (p.outletAdded) {
    push('story.outlet_added', `${p.story.id}\n${article.outlet}`, {
      story: storyRecord(p.story),
      outlet: article.outlet,
      independent: article.duplicateOf === null,
      article: about,
      score: p.score,
      evidence: { similarity: p.similarity, timeGapDays: p.timeGapDays },
      note: STORY_NOTE,
    });
  }
  return out;
}

/** The "story.merged" notification for one consolidation merge of two stories. */
export function buildStoryMergeMessages(m: StoryMergePlan, merged: StoryState, now: Date): OutboxMessage[] {
  const out: OutboxMessage[] = [];
  messageSink(out, now)('story.merged', `${m.from}\n${m.into}`, {
    story: storyRecord(merged),
    mergedFrom: m.from,
    score: m.score,
    note: STORY_NOTE,
  });
  return out;
}

/** The "story.split" notification for one consolidation split of a story. */
export function buildStorySplitMessages(plan: StorySplitPlan, now: Date): OutboxMessage[] {
  const out: OutboxMessage[] = [];
  messageSink(out, now)('story.split', `${plan.kept.id}\n${plan.split.id}`, {
    story: storyRecord(plan.kept),
    splitOff: storyRecord(plan.split),
    articlesMoved: plan.moved,
    score: plan.score,
    note: STORY_NOTE,
  });
  return out;
}

/**
 * The notification for one analyst's correction or its undo: "event.corrected" with the
 * events as they now stand, each a part of its own (`event`, `otherEvent`) as erasure
 * expects, or "story.corrected" with the story as it now stands.
 */
export function buildCorrectionMessages(
  c: CorrectionRecord,
  events: readonly EventRecord[],
  now: Date,
  story?: StoryRecord,
): OutboxMessage[] {
  const out: OutboxMessage[] = [];
  messageSink(out, now)(story ? 'story.corrected' : 'event.corrected', c.id, {
    correction: { id: c.id, kind: c.kind, by: c.by, at: c.at, note: c.note, undoes: c.undoes },
    ...(story ? { story } : {}),
    ...(events[0] ? { event: events[0] } : {}),
    ...(events[1] ? { otherEvent: events[1] } : {}),
    removed: Object.entries({ ...c.after.events, ...c.after.stories })
      .filter(([, img]) => img === null)
      .map(([id]) => id),
    mentions: c.mentions.map((m) => ({ article: m.articleId, sentence: m.sentenceIndex })),
    note: 'Analyst correction: a person changed what the machine suggested.',
  });
  return out;
}

const STORY_NOTE = 'Automatic grouping: a machine suggestion to verify before publishing or acting on it.';

/** The "event.merged" notification for one consolidation merge. */
export function buildMergeMessages(m: MergePlan, merged: EventState, now: Date): OutboxMessage[] {
  const out: OutboxMessage[] = [];
  messageSink(out, now)('event.merged', `${m.from}\n${m.into}`, {
    event: toRecord(merged),
    mergedFrom: m.from,
    score: m.score,
    note: 'Automatic consolidation: a machine suggestion to verify before publishing or acting on it.',
  });
  return out;
}

function messageSink(out: OutboxMessage[], now: Date): (type: NotificationType, key: string, data: unknown) => void {
  const created = now.toISOString();
  return (type, key, data) => {
    const id = `msg_${createHash('sha256').update(`${type}\n${key}`).digest('hex').slice(0, 24)}`;
    out.push({ id, type, body: JSON.stringify({ type, timestamp: created, data }), created });
  };
}
