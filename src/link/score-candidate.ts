/**
 * How well a mention fits an event: cosine similarity to the event's centroid, plus a
 * bonus for shared rare participants and places, weighed down by the time gap with an
 * exponential decay (half-life configurable; 7 days was the best single setting in trials
 * on dated news).
 *
 *   base  = cosine x 0.5 ^ (gap days / half-life)
 *   score = min(1, base x (1 + overlapWeight x min(1, sum of rarity / ln(2 + E))) x size x article)
 *   rarity of a shared name = ln(1 + E / (1 + events with the name)), E = events so far
 *   size    = min(3, 1 + sizePrior x ln(mentions of the event))   (a Chinese restaurant
 *             process's prior: an event many sentences report is the likelier home)
 *   article = sameArticleFactor for an event the mention's own article opened, else 1
 */
import type { EmbeddedMention, LinkEvidence, Vector } from '../records.js';
import { type EventState, mentionSpan, nameKey } from './event-state.js';

/** Scoring settings. */
export interface ScoreOptions {
  halfLifeDays: number;
  overlapWeight: number;
  sizePrior: number;
  sameArticleFactor: number;
}

/** The size prior's multiplier is capped, so one huge event cannot take in everything. */
const MAX_SIZE_MULTIPLIER = 3;

/** A candidate's score and the evidence for it. */
export interface ScoredCandidate {
  event: EventState;
  score: number;
  evidence: LinkEvidence;
}

/** Cosine similarity between a mention vector and an event centroid sum. */
export function cosine(v: Vector, e: Pick<EventState, 'sparse' | 'dense' | 'norm'>): number {
  if (e.norm === 0) return 0;
  let dot = 0;
  if (v.kind === 'sparse') {
    for (let i = 0; i < v.indices.length; i++) {
      const w = e.sparse.get(v.indices[i]!);
      if (w !== undefined) dot += w * v.values[i]!;
    }
  } else if (e.dense) {
    for (let i = 0; i < v.values.length; i++) dot += v.values[i]! * e.dense[i]!;
  }
  return dot / e.norm;
}

/** What scoring needs of a mention, worked out once rather than per candidate. */
export interface MentionFeatures {
  mention: EmbeddedMention;
  span: [number, number];
  /** [surface form, name key, is a place]. */
  names: [string, string, boolean][];
}

/** Prepares a mention for scoring against many candidates. */
export function mentionFeatures(m: EmbeddedMention): MentionFeatures {
  return {
    mention: m,
    span: mentionSpan(m),
    names: [
      ...m.participants.map((p): [string, string, boolean] => [p, nameKey(p), false]),
      ...m.places.map((p): [string, string, boolean] => [p, nameKey(p), true]),
    ],
  };
}

/**
 * Scores one candidate event for a mention; `carriers` says how many events carry a name
 * now; `sameArticle` says the mention's own article opened the event.
 */
export function scoreCandidate(
  f: MentionFeatures,
  e: EventState,
  carriers: (nameKey: string) => number,
  totalEvents: number,
  o: ScoreOptions,
  sameArticle = false,
): ScoredCandidate {
  const m = f.mention;
  const similarity = cosine(m.vector, e);
  const [ms, me] = f.span;
  const gap = Math.max(0, e.timeStart - me, ms - e.timeEnd);
  const timeDecay = Math.pow(0.5, gap / o.halfLifeDays);
  const sharedParticipants: string[] = [];
  const sharedPlaces: string[] = [];
  let rarity = 0;
  // Names match across the two lists: the same name can read as a participant in one
  // sentence and as a place in another ("Vellmouth said" / "in Vellmouth").
  for (const [surface, k, isPlace] of f.names) {
    if (!e.participants.has(k) && !e.places.has(k)) continue;
    (isPlace ? sharedPlaces : sharedParticipants).push(surface);
    rarity += Math.log(1 + totalEvents / (1 + carriers(k)));
  }
  const base = similarity * timeDecay;
  // The bonus scales the similarity rather than adding to it, so shared names can tip a
  // close call but never link sentences that share nothing else. On meantime-en an
  // additive bonus of 0.1 cost 3 CoNLL points (common company names in every article).
  const overlapBonus = base * o.overlapWeight * Math.min(1, rarity / Math.log(2 + totalEvents));
  const sizeFactor = Math.min(MAX_SIZE_MULTIPLIER, 1 + o.sizePrior * Math.log(Math.max(1, e.mentionCount)));
  const articleFactor = sameArticle ? o.sameArticleFactor : 1;
  const score = Math.min(1, (base + overlapBonus) * sizeFactor * articleFactor);
  // Both name someone or somewhere and none is shared: a link to weigh (the review queue asks about these apart).
  const conflictingNames =
    f.names.length > 0 && e.participants.size + e.places.size > 0 && sharedParticipants.length + sharedPlaces.length === 0;
  return {
    event: e,
    score,
    evidence: {
      similarity,
      timeDecay,
      timeGapDays: gap,
      sharedParticipants,
      sharedPlaces,
      overlapBonus,
      opened: false,
      ...(sizeFactor !== 1 ? { sizeFactor } : {}),
      ...(sameArticle ? { sameArticleFactor: articleFactor } : {}),
      ...(conflictingNames ? { conflictingNames: true } : {}),
    },
  };
}
