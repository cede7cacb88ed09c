/**
 * The story linker's view of a story (an ongoing thread that articles join: the levee
 * breach and its aftermath): the centroid of its articles' whole-text vectors, its names,
 * outlets and time. Serialised to bytes like an event's state, so the store keeps it
 * without knowing what is inside.
 */
import { createHash } from 'node:crypto';
import type { Vector } from '../records.js';
import { type Centroid, addVector, decodeCentroid, encodeCentroid, nameKey } from './event-state.js';

/** What one article brings to its story. */
export interface StoryArticle {
  id: string;
  title: string;
  outlet: string;
  /** Publication (or fetch) time, RFC 3339. */
  published: string;
  /** The whole article's vector (every sentence), the story's evidence. */
  vector: Vector;
  /** Participants and places named anywhere in the article. */
  names: readonly string[];
  /** True when the article is a copy of an earlier one (not independent reporting). */
  isCopy: boolean;
}

/** Everything the story linker knows about one story. */
export interface StoryState extends Centroid {
  id: string;
  /** The headline of the article that opened it (headlines are not erased with text). */
  label: string;
  firstSeen: string;
  lastSeen: string;
  articleCount: number;
  /** Outlet → [articles, independent articles]. */
  outlets: Map<string, readonly [number, number]>;
  /** Normalised name → [surface form, articles naming it]. */
  names: Map<string, readonly [string, number]>;
  /** When the linker last changed it (as EventState.touched). */
  touched: number;
  version: number;
  /** Its article count when consolidation last examined it for a split (0: never). */
  examined: number;
}

/** The public record of a story. */
export interface StoryRecord {
  id: string;
  label: string;
  firstSeen: string;
  lastSeen: string;
  articleCount: number;
  outlets: string[];
  /** The names most often given, most frequent first. */
  names: string[];
  /** Outlets with at least one article that is not a copy of another. */
  independentOutlets: number;
  version: number;
}

/** Deterministic story id from the article that opens it. */
export function storyIdFor(articleId: string): string {
  return `st_${createHash('sha256').update(articleId).digest('hex').slice(0, 16)}`;
}

/** A new, empty story for an article to open. */
export function openStory(a: StoryArticle): StoryState {
  return {
    id: storyIdFor(a.id),
    label: a.title || a.id,
    firstSeen: a.published,
    lastSeen: a.published,
    articleCount: 0,
    sparse: new Map(),
    dense: null,
    norm: 0,
    outlets: new Map(),
    names: new Map(),
    touched: 0,
    version: 0,
    examined: 0,
  };
}

/** Adds an article to a story (mutates it). */
export function addArticle(s: StoryState, a: StoryArticle, centroidTerms: number): void {
  addVector(s, a.vector, 1, centroidTerms);
  if (a.published < s.firstSeen) s.firstSeen = a.published;
  if (a.published > s.lastSeen) s.lastSeen = a.published;
  s.articleCount++;
  const o = s.outlets.get(a.outlet) ?? [0, 0];
  s.outlets.set(a.outlet, [o[0] + 1, o[1] + (a.isCopy ? 0 : 1)]);
  for (const name of new Set(a.names)) {
    const k = nameKey(name);
    if (k === '') continue;
    const cur = s.names.get(k);
    s.names.set(k, cur ? [cur[0], cur[1] + 1] : [name, 1]);
  }
  trimNames(s);
  s.version++;
}

/** Names a story keeps (its most given); a long story otherwise carries every name it ever met. */
const NAMES_KEPT = 128;

/**
 * Keeps the story's NAMES_KEPT most given names once it holds twice as many (ties by key, so
 * a resumed linker trims alike): cloning and indexing a story then cost the same however
 * long it runs, and a name given once in a thousand articles is no evidence of the story.
 */
function trimNames(s: StoryState): void {
  if (s.names.size <= 2 * NAMES_KEPT) return;
  const kept = [...s.names].sort((a, b) => b[1][1] - a[1][1] || (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0)).slice(0, NAMES_KEPT);
  s.names = new Map(kept);
}

/** The union of two stories under the id of `into`. */
export function mergeStories(into: StoryState, from: StoryState, centroidTerms: number): StoryState {
  const m = cloneStory(into);
  for (const [f, w] of from.sparse) m.sparse.set(f, (m.sparse.get(f) ?? 0) + w);
  if (from.dense) {
    m.dense ??= new Float64Array(from.dense.length);
    for (let i = 0; i < from.dense.length; i++) m.dense[i]! += from.dense[i]!;
  }
  // Back within the term limit, and the norm recomputed (addVector with nothing added does both).
  addVector(m, { kind: 'sparse', indices: new Uint32Array(0), values: new Float32Array(0) }, 0, centroidTerms);
  if (m.dense) {
    let sq = 0;
    for (const v of m.dense) sq += v * v;
    for (const w of m.sparse.values()) sq += w * w;
    m.norm = Math.sqrt(sq);
  }
  if (from.firstSeen < m.firstSeen) m.firstSeen = from.firstSeen;
  if (from.lastSeen > m.lastSeen) m.lastSeen = from.lastSeen;
  m.articleCount += from.articleCount;
  for (const [k, [a, b]] of from.outlets) {
    const cur = m.outlets.get(k) ?? [0, 0];
    m.outlets.set(k, [cur[0] + a, cur[1] + b]);
  }
  for (const [k, [surface, n]] of from.names) m.names.set(k, [m.names.get(k)?.[0] ?? surface, (m.names.get(k)?.[1] ?? 0) + n]);
  trimNames(m);
  m.version++;
  return m;
}

/** A deep copy (a plan changes copies, never committed state). */
export function cloneStory(s: StoryState): StoryState {
  return {
    ...s,
    sparse: new Map(s.sparse),
    dense: s.dense ? new Float64Array(s.dense) : null,
    // The pairs are replaced, never changed in place, so the copy shares them.
    outlets: new Map(s.outlets),
    names: new Map(s.names),
  };
}

/** The public record of a story. */
export function storyRecord(s: StoryState): StoryRecord {
  return {
    id: s.id,
    label: s.label,
    firstSeen: s.firstSeen,
    lastSeen: s.lastSeen,
    articleCount: s.articleCount,
    outlets: [...s.outlets.keys()].sort(),
    names: [...s.names.values()]
      .sort((a, b) => b[1] - a[1] || a[0].localeCompare(b[0]))
      .slice(0, 12)
      .map((x) => x[0]),
    independentOutlets: [...s.outlets.values()].filter(([, independent]) => independent > 0).length,
    version: s.version,
  };
}

/** Binary form: a JSON header, then the centroid arrays (as serialiseEvent). */
export function serialiseStory(s: StoryState): Buffer {
  const header = Buffer.from(
    JSON.stringify({
      id: s.id,
      label: s.label,
      firstSeen: s.firstSeen,
      lastSeen: s.lastSeen,
      articleCount: s.articleCount,
      norm: s.norm,
      outlets: [...s.outlets],
      names: [...s.names],
      touched: s.touched,
      version: s.version,
      examined: s.examined,
      sparse: s.sparse.size,
      dense: s.dense ? s.dense.length : 0,
    }),
  );
  return encodeCentroid(header, s);
}

/** Inverse of serialiseStory. */
export function deserialiseStory(buf: Uint8Array): StoryState {
  const b = Buffer.from(buf.buffer, buf.byteOffset, buf.byteLength);
  const hlen = b.readUInt32LE(0);
  const h = JSON.parse(b.subarray(4, 4 + hlen).toString('utf8')) as {
    id: string;
    label: string;
    firstSeen: string;
    lastSeen: string;
    articleCount: number;
    norm: number;
    outlets: [string, [number, number]][];
    names: [string, [string, number]][];
    touched: number;
    version: number;
    examined?: number;
    sparse: number;
    dense: number;
  };
  const { sparse, dense } = decodeCentroid(b, 4 + hlen, h.sparse, h.dense);
  return {
    id: h.id,
    label: h.label,
    firstSeen: h.firstSeen,
    lastSeen: h.lastSeen,
    articleCount: h.articleCount,
    norm: h.norm,
    sparse,
    dense,
    outlets: new Map(h.outlets),
    names: new Map(h.names),
    touched: h.touched,
    version: h.version,
    // States written before splits existed carry no mark.
    examined: h.examined ?? 0,
  };
}
