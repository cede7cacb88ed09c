/**
 * The linker's working view of an event: its centroid (the sum of its mentions' vectors),
 * its time span, participants, places and outlets. Serialised to a compact binary form
 * so the store can keep it without knowing what is inside. Over 350 lines because the
 * state's fields, its updates and its byte layout change together.
 */
import { createHash } from 'node:crypto';
import type { EmbeddedMention, EventRecord, Vector } from '../records.js';
import { dayNumber } from '../text/days.js';
import { topN } from '../top-n.js';
import { labelFrom } from './labels.js';

/** Everything the linker knows about one event. */
export interface EventState {
  id: string;
  label: string;
  firstSeen: string;
  lastSeen: string;
  /** Day numbers (days since 1970-01-01) of the event's time span, inclusive. */
  timeStart: number;
  timeEnd: number;
  /** True once a mention gave an explicit time; until then the span is the opener's publication days. */
  explicitTime: boolean;
  /** Sparse centroid sum (feature → weight); empty for dense vectors. */
  sparse: Map<number, number>;
  /** Dense centroid sum; null for sparse vectors. */
  dense: Float64Array | null;
  /** L2 norm of the centroid sum. */
  norm: number;
  mentionCount: number;
  /**
   * Normalised participant key → [surface form, count]. The pairs are replaced, never
   * changed in place, so a copy of the event can share them (cloneEvent).
   */
  participants: Map<string, readonly [string, number]>;
  places: Map<string, readonly [string, number]>;
  /** Outlet → [mentions, independent mentions (not from copies of other articles)]. */
  outlets: Map<string, readonly [number, number]>;
  version: number;
  /**
   * When the linker last changed the event: a number that grows with every change it makes
   * (0 for states written before it was kept). The candidate index orders events by it, so a
   * linker rebuilt from the store orders them as the running one did.
   */
  touched: number;
  /** The event's mention count when consolidation last examined it for a split; -1: never. */
  splitCheckedAt: number;
  /** The story of the article that opened it (null before stories were kept). */
  story: string | null;
}

/**
 * Stated times wider than this (a month, a year) place an event too vaguely to tell it
 * from its neighbours; they are left out of its span.
 */
const MAX_STATED_SPAN_DAYS = 7;

/** The day span a mention places its event in: its resolved times, else the day of and before publication. */
export function mentionSpan(m: Pick<EmbeddedMention, 'times' | 'published'>): [number, number] {
  return explicitSpan(m) ?? implicitSpan(m);
}

function implicitSpan(m: Pick<EmbeddedMention, 'published'>): [number, number] {
  const pub = dayNumber(m.published.slice(0, 10));
  return [pub - 1, pub];
}

/** The span of a mention's own time expressions, ignoring any more than a year from publication (background). */
export function explicitSpan(m: Pick<EmbeddedMention, 'times' | 'published'>): [number, number] | null {
  const pub = dayNumber(m.published.slice(0, 10));
  const near = m.times.filter(
    (t) => Math.abs(dayNumber(t.end) - pub) <= 366 && dayNumber(t.end) - dayNumber(t.start) <= MAX_STATED_SPAN_DAYS,
  );
  if (near.length === 0) return null;
  let lo = Infinity;
  let hi = -Infinity;
  for (const t of near) {
    lo = Math.min(lo, dayNumber(t.start));
    hi = Math.max(hi, dayNumber(t.end));
  }
  return [lo, hi];
}

/** Lower-cased key for matching names: no leading article, no possessive, single spaces. */
export function nameKey(name: string): string {
  return name
    .toLowerCase()
    .replace(/^the\s+/, '')
    .replace(/['\u2019]s?$/, '')
    .replace(/\s+/g, ' ')
    .trim();
}

/** Deterministic event id from the mention that opens it: replaying the same mention opens the same id. */
export function eventIdFor(m: Pick<EmbeddedMention, 'articleId' | 'sentenceIndex'>): string {
  return `ev_${createHash('sha256').update(`${m.articleId}#${m.sentenceIndex}`).digest('hex').slice(0, 16)}`;
}

/** A new event opened by one mention. */
export function openEvent(id: string, m: EmbeddedMention): EventState {
  const explicit = explicitSpan(m);
  const [timeStart, timeEnd] = explicit ?? implicitSpan(m);
  const e: EventState = {
    id,
    label: labelFrom(m.text),
    firstSeen: m.published,
    lastSeen: m.published,
    timeStart,
    timeEnd,
    explicitTime: explicit !== null,
    sparse: new Map(),
    dense: null,
    norm: 0,
    mentionCount: 0,
    participants: new Map(),
    places: new Map(),
    outlets: new Map(),
    version: 0,
    touched: 0,
    splitCheckedAt: -1,
    story: null,
  };
  return e;
}

/** A further link of a sentence counts half in its event's centroid. */
const FURTHER_LINK_WEIGHT = 0.5;

/**
 * How much a link of a sentence weighs in its event's state: 1 for the sentence's best
 * link, half for a further one, nothing for a back-reference ("the move" pointing at an
 * event its article told before: the sentence refers to that event but does not report it
 * afresh, so it neither moves the centroid nor counts as one of its mentions).
 */
export function linkWeight(l: { rank: number; refersBack?: boolean }): number {
  return l.refersBack ? 0 : l.rank === 0 ? 1 : FURTHER_LINK_WEIGHT;
}

/** Adds a mention to an event (mutates `e`) with its link's weight (linkWeight); weight 0 leaves it as it was. */
export function addMention(e: EventState, m: EmbeddedMention, weight: number, centroidTerms: number): void {
  if (weight === 0) return;
  addVector(e, m.vector, weight, centroidTerms);
  // Only stated times move the event's span. A later report without a date says when it
  // was written, not when the event happened; letting it stretch the span would let the
  // event swallow whatever its story reports next.
  const explicit = explicitSpan(m);
  if (explicit && !e.explicitTime) {
    [e.timeStart, e.timeEnd] = explicit;
    e.explicitTime = true;
  } else if (explicit) {
    e.timeStart = Math.min(e.timeStart, explicit[0]);
    e.timeEnd = Math.max(e.timeEnd, explicit[1]);
  }
  if (m.published < e.firstSeen) e.firstSeen = m.published;
  if (m.published > e.lastSeen) e.lastSeen = m.published;
  e.mentionCount++;
  for (const p of m.participants) bump(e.participants, nameKey(p), p);
  for (const p of m.places) bump(e.places, nameKey(p), p);
  const o = e.outlets.get(m.outlet) ?? [0, 0];
  e.outlets.set(m.outlet, [o[0] + 1, o[1] + (m.isCopy ? 0 : 1)]);
  e.version++;
}

/**
 * Takes one link of a mention back out of an event (mutates `e`): when two events that a
 * sentence linked to both merge, the sentence keeps one link and must count once. The time
 * span and first/last seen stay (another mention may share them); a centroid term the
 * event had already dropped (centroidTerms) is not taken below zero.
 */
export function removeMention(e: EventState, m: Omit<EmbeddedMention, 'vector'> & { vector: Vector | null }, weight: number): void {
  if (weight === 0) return;
  if (m.vector) addVector(e, m.vector, -weight, Infinity, true);
  e.mentionCount = Math.max(0, e.mentionCount - 1);
  for (const p of m.participants) unbump(e.participants, nameKey(p));
  for (const p of m.places) unbump(e.places, nameKey(p));
  const o = e.outlets.get(m.outlet);
  if (o) {
    const next: [number, number] = [o[0] - 1, o[1] - (m.isCopy ? 0 : 1)];
    if (next[0] <= 0) e.outlets.delete(m.outlet);
    else e.outlets.set(m.outlet, [next[0], Math.max(0, next[1])]);
  }
  e.version++;
}

/** Cosine similarity of two events' centroids. */
export function centroidCosine(a: Pick<EventState, 'sparse' | 'dense' | 'norm'>, b: Pick<EventState, 'sparse' | 'dense' | 'norm'>): number {
  if (a.norm === 0 || b.norm === 0) return 0;
  let dot = 0;
  if (a.dense && b.dense) {
    for (let i = 0; i < a.dense.length; i++) dot += a.dense[i]! * b.dense[i]!;
  } else {
    const [small, large] = a.sparse.size <= b.sparse.size ? [a.sparse, b.sparse] : [b.sparse, a.sparse];
    for (const [f, w] of small) dot += w * (large.get(f) ?? 0);
  }
  return dot / (a.norm * b.norm);
}

/** The union of two events, under the id of `into`. */
export function mergeStates(into: EventState, from: EventState, centroidTerms: number): EventState {
  const m = cloneEvent(into);
  for (const [f, w] of from.sparse) m.sparse.set(f, (m.sparse.get(f) ?? 0) + w);
  if (m.sparse.size > centroidTerms * 1.5)
    m.sparse = new Map([...m.sparse].sort((a, b) => b[1] - a[1] || a[0] - b[0]).slice(0, centroidTerms));
  if (from.dense) {
    m.dense ??= new Float64Array(from.dense.length);
    for (let i = 0; i < from.dense.length; i++) m.dense[i]! += from.dense[i]!;
  }
  let sq = 0;
  if (m.dense) for (const v of m.dense) sq += v * v;
  for (const w of m.sparse.values()) sq += w * w;
  m.norm = Math.sqrt(sq);
  if (from.explicitTime && !m.explicitTime) {
    m.timeStart = from.timeStart;
    m.timeEnd = from.timeEnd;
    m.explicitTime = true;
  } else if (from.explicitTime === m.explicitTime) {
    m.timeStart = Math.min(m.timeStart, from.timeStart);
    m.timeEnd = Math.max(m.timeEnd, from.timeEnd);
  }
  if (from.firstSeen < m.firstSeen) m.firstSeen = from.firstSeen;
  if (from.lastSeen > m.lastSeen) m.lastSeen = from.lastSeen;
  m.mentionCount += from.mentionCount;
  for (const [k, [surface, n]] of from.participants)
    m.participants.set(k, [m.participants.get(k)?.[0] ?? surface, (m.participants.get(k)?.[1] ?? 0) + n]);
  for (const [k, [surface, n]] of from.places) m.places.set(k, [m.places.get(k)?.[0] ?? surface, (m.places.get(k)?.[1] ?? 0) + n]);
  for (const [k, [a, b]] of from.outlets) {
    const cur = m.outlets.get(k) ?? [0, 0];
    m.outlets.set(k, [cur[0] + a, cur[1] + b]);
  }
  m.version++;
  return m;
}

/** A copy a link plan can change without touching committed state (the name pairs are never changed in place, so they are shared). */
export function cloneEvent(e: EventState): EventState {
  return {
    ...e,
    sparse: new Map(e.sparse),
    dense: e.dense ? new Float64Array(e.dense) : null,
    participants: new Map(e.participants),
    places: new Map(e.places),
    outlets: new Map(e.outlets),
  };
}

/** The public record of an event. */
export function toRecord(e: EventState): EventRecord {
  return {
    id: e.id,
    label: e.label,
    firstSeen: e.firstSeen,
    lastSeen: e.lastSeen,
    timeStart: dayString(e.timeStart),
    timeEnd: dayString(e.timeEnd),
    story: e.story,
    participants: topNames(e.participants, 12),
    places: topNames(e.places, 8),
    outlets: [...e.outlets.keys()].sort(),
    mentionCount: e.mentionCount,
    version: e.version,
  };
}

/**
 * Binary form: a JSON header (everything but the centroid), then the centroid arrays. The
 * label is left out: it is a sentence of text, which the store keeps in one place so that
 * erasing the text erases it (the store's label is the one shown and notified).
 */
export function serialiseEvent(e: EventState): Buffer {
  const header = Buffer.from(
    JSON.stringify({
      id: e.id,
      firstSeen: e.firstSeen,
      lastSeen: e.lastSeen,
      timeStart: e.timeStart,
      timeEnd: e.timeEnd,
      explicitTime: e.explicitTime,
      norm: e.norm,
      mentionCount: e.mentionCount,
      version: e.version,
      touched: e.touched,
      splitCheckedAt: e.splitCheckedAt,
      story: e.story,
      participants: [...e.participants],
      places: [...e.places],
      outlets: [...e.outlets],
      sparse: e.sparse.size,
      dense: e.dense ? e.dense.length : 0,
    }),
  );
  return encodeCentroid(header, e);
}

/** Inverse of serialiseEvent. */
export function deserialiseEvent(buf: Uint8Array): EventState {
  const b = Buffer.from(buf.buffer, buf.byteOffset, buf.byteLength);
  const hlen = b.readUInt32LE(0);
  const h = JSON.parse(b.subarray(4, 4 + hlen).toString('utf8')) as {
    id: string;
    label?: string;
    firstSeen: string;
    lastSeen: string;
    timeStart: number;
    timeEnd: number;
    explicitTime: boolean;
    norm: number;
    mentionCount: number;
    version: number;
    touched?: number;
    splitCheckedAt?: number;
    story?: string | null;
    participants: [string, [string, number]][];
    places: [string, [string, number]][];
    outlets: [string, [number, number]][];
    sparse: number;
    dense: number;
  };
  const { sparse, dense } = decodeCentroid(b, 4 + hlen, h.sparse, h.dense);
  return {
    // States written before labels left the header still carry one.
    id: h.id,
    label: h.label ?? '',
    firstSeen: h.firstSeen,
    lastSeen: h.lastSeen,
    timeStart: h.timeStart,
    timeEnd: h.timeEnd,
    explicitTime: h.explicitTime,
    sparse,
    dense,
    norm: h.norm,
    mentionCount: h.mentionCount,
    version: h.version,
    participants: new Map(h.participants),
    places: new Map(h.places),
    outlets: new Map(h.outlets),
    // States written before these were kept: untouched, never examined.
    touched: h.touched ?? 0,
    splitCheckedAt: h.splitCheckedAt ?? -1,
    story: h.story ?? null,
  };
}

/** A centroid sum: sparse features, or dense values, and its L2 norm. */
export interface Centroid {
  sparse: Map<number, number>;
  dense: Float64Array | null;
  norm: number;
}

/**
 * Adds `weight` x `v` to a centroid sum (mutates it), keeping at most `centroidTerms`
 * sparse features (the strongest; events and stories alike).
 */
export function addVector(e: Centroid, v: Vector, weight: number, centroidTerms: number, removing = false): void {
  if (v.kind === 'dense') {
    e.dense ??= new Float64Array(v.values.length);
    for (let i = 0; i < v.values.length; i++) e.dense[i]! += weight * v.values[i]!;
    let sq = 0;
    for (let i = 0; i < e.dense.length; i++) sq += e.dense[i]! * e.dense[i]!;
    e.norm = Math.sqrt(sq);
    return;
  }
  for (let i = 0; i < v.indices.length; i++) {
    const f = v.indices[i]!;
    const cur = e.sparse.get(f);
    if (removing && cur === undefined) continue;
    const next = (cur ?? 0) + weight * v.values[i]!;
    // Sums of non-negative TF-IDF weights: what a removal leaves at or near zero is gone.
    if (removing && next <= 1e-9) e.sparse.delete(f);
    else e.sparse.set(f, next);
  }
  // Keep the centroid to its strongest terms: bounded memory per event, and the weak tail
  // contributes little to cosine similarity.
  if (e.sparse.size > centroidTerms * 1.5) {
    const kept = [...e.sparse].sort((a, b) => b[1] - a[1] || a[0] - b[0]).slice(0, centroidTerms);
    e.sparse = new Map(kept);
  }
  let sq = 0;
  for (const w of e.sparse.values()) sq += w * w;
  e.norm = Math.sqrt(sq);
}

function unbump(map: Map<string, readonly [string, number]>, key: string): void {
  const cur = map.get(key);
  if (!cur) return;
  if (cur[1] <= 1) map.delete(key);
  else map.set(key, [cur[0], cur[1] - 1]);
}

function bump(map: Map<string, readonly [string, number]>, key: string, surface: string): void {
  if (key === '') return;
  const cur = map.get(key);
  map.set(key, cur ? [cur[0], cur[1] + 1] : [surface, 1]);
}

/** Orders as String.prototype.localeCompare does, without its per-call set-up. */
const collator = new Intl.Collator();

/**
 * The `n` most mentioned names (count descending, then in locale order), chosen by insertion
 * into a short list: an event record is built at every change, and a large event holds
 * thousands of names, most of them below the list's last count.
 */
export function topNames(map: ReadonlyMap<string, readonly [string, number]>, n: number): string[] {
  return topN(map.values(), n, (a, b) => a[1] > b[1] || (a[1] === b[1] && collator.compare(a[0], b[0]) < 0)).map((x) => x[0]);
}

function dayString(n: number): string {
  return new Date(n * 86_400_000).toISOString().slice(0, 10);
}

/**
 * A centroid's `n` strongest features (weight descending, feature ascending on a
 * tie), chosen by insertion into a short list rather than by sorting every term: the
 * linkers work this out at every change of an event or story.
 */
export function topTermFeatures(e: Centroid, n: number): number[] {
  const features: number[] = [];
  const weights: number[] = [];
  for (const [f, w] of e.sparse) {
    const full = features.length === n;
    if (full && (w < weights[n - 1]! || (w === weights[n - 1]! && f > features[n - 1]!))) continue;
    let i = full ? n - 1 : features.length;
    if (!full) {
      features.push(f);
      weights.push(w);
    }
    while (i > 0 && (w > weights[i - 1]! || (w === weights[i - 1]! && f < features[i - 1]!))) {
      features[i] = features[i - 1]!;
      weights[i] = weights[i - 1]!;
      i--;
    }
    features[i] = f;
    weights[i] = w;
  }
  return features;
}

/**
 * The byte layout of an event's or a story's state: a 4-byte header length, the JSON header,
 * the sparse centroid's features (uint32) then its values, then the dense centroid, values as
 * float64 so a restart resumes bit-for-bit. The header must carry `sparse` and `dense`: the sizes.
 */
export function encodeCentroid(header: Buffer, c: Pick<Centroid, 'sparse' | 'dense'>): Buffer {
  const body = Buffer.alloc(4 + header.length + c.sparse.size * 12 + (c.dense ? c.dense.length * 8 : 0));
  body.writeUInt32LE(header.length, 0);
  header.copy(body, 4);
  let at = 4 + header.length;
  for (const f of c.sparse.keys()) {
    body.writeUInt32LE(f, at);
    at += 4;
  }
  for (const v of c.sparse.values()) {
    body.writeDoubleLE(v, at);
    at += 8;
  }
  if (c.dense)
    for (const v of c.dense) {
      body.writeDoubleLE(v, at);
      at += 8;
    }
  return body;
}

/** Reads the centroid arrays encodeCentroid wrote after the header (at `at`, with the header's sizes). */
export function decodeCentroid(b: Buffer, at: number, sparseSize: number, denseSize: number): Pick<Centroid, 'sparse' | 'dense'> {
  const keys: number[] = [];
  for (let i = 0; i < sparseSize; i++) {
    keys.push(b.readUInt32LE(at));
    at += 4;
  }
  const sparse = new Map<number, number>();
  for (let i = 0; i < sparseSize; i++) {
    sparse.set(keys[i]!, b.readDoubleLE(at));
    at += 8;
  }
  let dense: Float64Array | null = null;
  if (denseSize > 0) {
    dense = new Float64Array(denseSize);
    for (let i = 0; i < denseSize; i++) {
      dense[i] = b.readDoubleLE(at);
      at += 8;
    }
  }
  return { sparse, dense };
}

/** An event's mention counts per outlet, as the stores keep them. */
export function outletRows(e: EventState): { outlet: string; mentions: number; independent: number }[] {
  return [...e.outlets].map(([outlet, [mentions, independent]]) => ({ outlet, mentions, independent }));
}
