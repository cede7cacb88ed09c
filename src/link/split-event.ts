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
import { addMention, centroidCosine, eventIdFor, type EventState, explicitSpan, mentionSpan, openEvent } from './event-state.js';
import { cosine } from './score-candidate.js';

/** One mention of the event, with the rank of its link to it (0 = the sentence's best link). */
export interface SplitMember {
  mention: EmbeddedMention;
  rank: number;
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
const MAX_ROUNDS = 10;
/** Further links of one sentence count half in a centroid, as when linking. */
const SECONDARY_WEIGHT = 0.5;

/**
 * Divides `event`'s mentions in two when they drifted apart, or returns null. `members`
 * must be the event's mentions in a stable order (oldest first); the result depends only
 * on them, so every process reaches the same split.
 */
export function planSplit(event: EventState, members: readonly SplitMember[], o: SplitOptions): SplitPlan | null {
  if (o.splitMinMentions <= 0 || members.length < Math.max(o.splitMinMentions, 2 * MIN_PART)) return null;
  const spans = members.map((m) => mentionSpan(m.mention));
  const explicit = members.map((m) => explicitSpan(m.mention));
  const fit = (i: number, p: Part): number => {
    const [ms, me] = spans[i]!;
    const gap = Math.max(0, p.timeStart - me, ms - p.timeEnd);
    return cosine(members[i]!.mention.vector, p) * Math.pow(0.5, gap / o.halfLifeDays);
  };
  const partOf = (indices: readonly number[]): Part => part(members, explicit, spans, indices);

  // Seeds: the mention that fits the event least, then the one least like it.
  const all = members.map((_, i) => i);
  const seedA = argMin(all, (i) => fit(i, event));
  const a0 = partOf([seedA]);
  const seedB = argMin(all, (i) => (i === seedA ? Infinity : fit(i, a0)));
  if (seedB === seedA) return null;
  let side = all.map((i) => (i === seedB ? 1 : 0));
  let parts: [Part, Part] = [a0, partOf([seedB])];
  for (let round = 0; round < MAX_ROUNDS; round++) {
    const next = all.map((i) => (fit(i, parts[1]) > fit(i, parts[0]) ? 1 : 0));
    const changed = next.some((x, i) => x !== side[i]);
    side = next;
    const [i0, i1] = [all.filter((i) => side[i] === 0), all.filter((i) => side[i] === 1)];
    if (i0.length === 0 || i1.length === 0) return null;
    parts = [partOf(i0), partOf(i1)];
    if (!changed) break;
  }
  const [p0, p1] = divide(members, side);
  if (p0.length < MIN_PART || p1.length < MIN_PART) return null;
  const [a, b] = parts;
  const gap = Math.max(0, b.timeStart - a.timeEnd, a.timeStart - b.timeEnd);
  const score = centroidCosine(a, b) * Math.pow(0.5, gap / o.halfLifeDays);
  if (score >= o.splitThreshold) return null;

  const build = (id: string, ms: readonly SplitMember[]): EventState => {
    const e = openEvent(id, ms[0]!.mention);
    // Both parts stay in the event's story (a split is within one thread).
    e.story = event.story;
    for (const m of ms) addMention(e, m.mention, weightOf(m), o.centroidTerms);
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

/** What the division needs of a part: its centroid and time span, built as addMention would. */
type Part = Pick<EventState, 'sparse' | 'dense' | 'norm' | 'timeStart' | 'timeEnd'>;

function part(
  members: readonly SplitMember[],
  explicit: readonly ([number, number] | null)[],
  spans: readonly [number, number][],
  indices: readonly number[],
): Part {
  const p: Part = { sparse: new Map(), dense: null, norm: 0, timeStart: Infinity, timeEnd: -Infinity };
  let sq = 0;
  for (const i of indices) {
    const v = members[i]!.mention.vector;
    const w = weightOf(members[i]!);
    if (v.kind === 'dense') {
      p.dense ??= new Float64Array(v.values.length);
      for (let k = 0; k < v.values.length; k++) p.dense[k]! += w * v.values[k]!;
    } else {
      for (let k = 0; k < v.indices.length; k++) p.sparse.set(v.indices[k]!, (p.sparse.get(v.indices[k]!) ?? 0) + w * v.values[k]!);
    }
    const span = explicit[i];
    if (span) {
      p.timeStart = Math.min(p.timeStart, span[0]);
      p.timeEnd = Math.max(p.timeEnd, span[1]);
    }
  }
  // As in an event: stated times make the span; without any, the first mention's days.
  if (p.timeStart === Infinity) [p.timeStart, p.timeEnd] = spans[indices[0]!]!;
  if (p.dense) for (const x of p.dense) sq += x * x;
  for (const x of p.sparse.values()) sq += x * x;
  p.norm = Math.sqrt(sq);
  return p;
}

function weightOf(m: SplitMember): number {
  return m.rank === 0 ? 1 : SECONDARY_WEIGHT;
}

function divide(members: readonly SplitMember[], side: readonly number[]): [SplitMember[], SplitMember[]] {
  return [members.filter((_, i) => side[i] === 0), members.filter((_, i) => side[i] === 1)];
}

/** The element of `xs` with the least f (the first on a tie). */
function argMin(xs: readonly number[], f: (x: number) => number): number {
  let best = xs[0]!;
  let bestValue = Infinity;
  for (const x of xs) {
    const v = f(x);
    if (v < bestValue) {
      bestValue = v;
      best = x;
    }
  }
  return best;
}
