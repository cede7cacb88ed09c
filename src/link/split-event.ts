/**
 * Splitting an event that drifted. An online linker can chain: each mention is close
 * enough to the event's centroid as it stands, but the centroid moves, and after a while
 * the event holds two happenings that do not resemble each other (the fire, then the
 * inquiry a month later). Consolidation looks at an event's own mentions, divides them in
 * two (two-means on cosine similarity with the time decay the linker uses, seeded by the
 * two mentions farthest apart), and splits when the two parts are less alike than a
 * mention must be to join an event.
 */
import { createHash } from 'node:crypto';
import type { EmbeddedMention } from '../records.js';
import { addMention, eventIdFor, type EventState, explicitSpan, linkWeight, mentionSpan, openEvent } from './event-state.js';
import { divide, divideInTwo } from './two-means.js';

/** One mention of the event, with the rank of its link to it (0 = the sentence's best link). */
export interface SplitMember {
  mention: EmbeddedMention;
  rank: number;
  /** A back-reference link: it weighs nothing in the event, so it takes no part in a split and stays. */
  refersBack?: boolean;
}

/** Split settings. */
export interface SplitOptions {
  halfLifeDays: number;
  centroidTerms: number;
  /** The two parts' centroid cosine x time decay must fall below this. */
  splitThreshold: number;
  /** Events with fewer mentions are not examined. */
  splitMinMentions: number;
}

/** A split found by consolidation, not yet committed. */
export interface SplitPlan {
  /** The event as it stays (same id), with the mentions that remain. */
  kept: EventState;
  /** The new event, with the mentions that move. */
  split: EventState;
  moved: { articleId: string; sentenceIndex: number }[];
  /** How alike the two parts are: centroid cosine x time decay. */
  score: number;
}

/** Each part keeps at least this many mentions: one stray sentence is left to the linker. */
const MIN_PART = 2;

/**
 * Divides `event`'s mentions in two when they drifted apart, or returns null. `linked`
 * must be the event's mentions in a stable order (oldest first); the result depends only
 * on them, so every process reaches the same split. Back-references weigh nothing in the
 * event and are left where they are.
 */
export function planSplit(event: EventState, linked: readonly SplitMember[], o: SplitOptions): SplitPlan | null {
  const members = linked.filter((m) => linkWeight(m) > 0);
  if (o.splitMinMentions <= 0 || members.length < Math.max(o.splitMinMentions, 2 * MIN_PART)) return null;
  const division = divideInTwo(
    members.map((m) => ({
      vector: m.mention.vector,
      span: mentionSpan(m.mention),
      explicit: explicitSpan(m.mention),
      weight: linkWeight(m),
    })),
    event,
    o.halfLifeDays,
  );
  if (!division) return null;
  const { side, score } = division;
  const [p0, p1] = divide(members, side);
  if (p0.length < MIN_PART || p1.length < MIN_PART) return null;
  if (score >= o.splitThreshold) return null;

  const build = (id: string, ms: readonly SplitMember[]): EventState => {
    const e = openEvent(id, ms[0]!.mention);
    // Both parts stay in the event's story (a split is within one thread).
    e.story = event.story;
    for (const m of ms) addMention(e, m.mention, linkWeight(m), o.centroidTerms);
    return e;
  };
  // The part with the mention that opened the event keeps its id; else the larger part,
  // then the one with the older first mention.
  const opener = members.findIndex((m) => eventIdFor(m.mention) === event.id);
  const keepSide = opener >= 0 ? side[opener]! : p0.length !== p1.length ? (p0.length > p1.length ? 0 : 1) : side[0]!;
  const [keep, move] = keepSide === 0 ? [p0, p1] : [p1, p0];
  const kept = build(event.id, keep);
  if (opener >= 0) kept.label = event.label;
  kept.version = event.version + 1;
  const first = move[0]!.mention;
  const split = build(splitEventId(event.id, first), move);
  return { kept, split, moved: move.map((m) => ({ articleId: m.mention.articleId, sentenceIndex: m.mention.sentenceIndex })), score };
}

/** The id of the event split off `from`, starting with `first`: the same split gives the same id. */
export function splitEventId(from: string, first: Pick<EmbeddedMention, 'articleId' | 'sentenceIndex'>): string {
  return `ev_${createHash('sha256').update(`split\n${from}\n${first.articleId}#${first.sentenceIndex}`).digest('hex').slice(0, 16)}`;
}
