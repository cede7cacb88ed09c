/**
 * The candidate index: which events might a new mention report? An inverted index from
 * keys (an event's most distinctive hashed terms, its participants and places) to the
 * events registered under them, plus a list of the most recently touched events.
 *
 * Each posting keeps at most `postingLimit` events, the most recently touched last, so a
 * lookup costs O(keys x postingLimit) however long the history grows. Only very common
 * keys ever reach the limit; an old event stays reachable through its rarer keys, which is
 * how a sentence today finds last month's event from another story.
 *
 *   key ──► [ev_old … ev_recent]     (move to the end on touch; drop the front past the limit)
 *
 * What an event is registered under is a function of its state alone (the caller gives
 * the keys and the touch number stored with it), and an event leaves the postings of keys
 * it no longer carries at once, so the index rebuilt from stored events in touch order is
 * the one a running linker holds: a restarted linker links as an uninterrupted one does.
 *
 * Keys are numbers (a term's hashed feature, or a name's id from the caller, negative),
 * and events are numbered internally, so that a lookup adds votes in a typed array (reset
 * by an epoch mark, not cleared) and keeps the best `limit` by insertion: no map, no sort,
 * no allocation per candidate. Measured on 20,000 synthetic mentions, this made the
 * lookup several times cheaper than a Map of votes sorted in full; string keys and Set
 * diffs on every registration cost a fifth of the link step at a million mentions.
 */

import { topN } from '../top-n.js';

/** A key with the weight its vote carries. */
export interface WeightedKey {
  key: number;
  weight: number;
}

/** Inverted index over event keys. */
export class CandidateIndex {
  private readonly postings = new Map<number, number[]>();
  private readonly recent: number[] = [];
  /** Number of events now carrying each key (for the rarity of names). */
  private readonly carriers = new Map<number, number>();
  /** The keys each event is registered under, ascending. */
  private readonly keysOf: (Int32Array | undefined)[] = [];
  private readonly handles = new Map<string, number>();
  private readonly ids: string[] = [];
  private votes = new Float64Array(1024);
  private marks = new Uint32Array(1024);
  private lastTouch = new Float64Array(1024);
  private epoch = 0;

  constructor(private readonly postingLimit: number) {}

  /**
   * Registers an event under `keys` (replacing the keys it had; repeats are fine), as
   * touched at `touched` (a number that grows with every change the linker makes; ties and
   * recency order by it). Calls must come in increasing `touched`.
   */
  register(eventId: string, keys: readonly number[], touched: number): void {
    const h = this.handle(eventId);
    this.lastTouch[h] = touched;
    const next = ascendingUnique(keys);
    const before = this.keysOf[h];
    // Both ascending: one walk finds the keys left and the keys gained.
    let i = 0;
    for (let j = 0; j < next.length; j++) {
      const key = next[j]!;
      while (before && i < before.length && before[i]! < key) this.leave(before[i++]!, h);
      if (before && i < before.length && before[i] === key) i++;
      else this.carriers.set(key, (this.carriers.get(key) ?? 0) + 1);
      this.touch(this.postingOf(key), h);
    }
    while (before && i < before.length) this.leave(before[i++]!, h);
    this.touch(this.recent, h);
    this.keysOf[h] = next;
  }

  /** Forgets an event (merged into another): it leaves every posting at once. */
  remove(eventId: string): void {
    const h = this.handles.get(eventId);
    if (h === undefined) return;
    for (const key of this.keysOf[h] ?? []) this.leave(key, h);
    dropFrom(this.recent, h);
    this.keysOf[h] = undefined;
  }

  /** How many events carry a key now. */
  eventsWith(key: number): number {
    return this.carriers.get(key) ?? 0;
  }

  /**
   * Up to `limit` candidate event ids, most votes first (ties: most recently touched first).
   * Keys are read rarest first (shortest posting), and reading stops once `budget` posting
   * entries have been visited: the cost of a lookup is then the same after ten thousand
   * mentions as after a million, and what is left unread is the weakest evidence.
   */
  lookup(keys: readonly WeightedKey[], limit: number, recentWeight: number, budget = Infinity): string[] {
    const epoch = ++this.epoch;
    const votes = this.votes;
    const marks = this.marks;
    const touched: number[] = [];
    const vote = (h: number, w: number): void => {
      if (marks[h] !== epoch) {
        marks[h] = epoch;
        votes[h] = 0;
        touched.push(h);
      }
      votes[h]! += w;
    };
    const recent = this.recent;
    for (let i = 0; i < recent.length; i++) vote(recent[i]!, (recentWeight * (i + 1)) / recent.length);
    const postings: [number[], number][] = [];
    for (const { key, weight } of keys) {
      const posting = this.postings.get(key);
      if (posting) postings.push([posting, weight]);
    }
    postings.sort((a, b) => a[0].length - b[0].length);
    let visited = 0;
    for (const [posting, weight] of postings) {
      if (visited >= budget) break;
      for (let i = 0; i < posting.length; i++) vote(posting[i]!, weight);
      visited += posting.length;
    }
    const best = topN(
      touched,
      limit,
      (a, b) => votes[a]! > votes[b]! || (votes[a] === votes[b] && this.lastTouch[a]! > this.lastTouch[b]!),
    );
    return best.map((h) => this.ids[h]!);
  }

  /** Number of keys held, for statistics. */
  get keys(): number {
    return this.postings.size;
  }

  private handle(eventId: string): number {
    let h = this.handles.get(eventId);
    if (h === undefined) {
      h = this.ids.length;
      this.ids.push(eventId);
      this.handles.set(eventId, h);
      if (h >= this.votes.length) this.grow();
    }
    return h;
  }

  private grow(): void {
    const n = this.votes.length * 2;
    const votes = new Float64Array(n);
    votes.set(this.votes);
    const marks = new Uint32Array(n);
    marks.set(this.marks);
    const last = new Float64Array(n);
    last.set(this.lastTouch);
    this.votes = votes;
    this.marks = marks;
    this.lastTouch = last;
  }

  private postingOf(key: number): number[] {
    let posting = this.postings.get(key);
    if (!posting) {
      posting = [];
      this.postings.set(key, posting);
    }
    return posting;
  }

  /** Moves `h` to the end of a posting, dropping the front past the limit. */
  private touch(posting: number[], h: number): void {
    const at = posting.lastIndexOf(h);
    if (at === posting.length - 1 && at >= 0) return;
    if (at >= 0) posting.splice(at, 1);
    posting.push(h);
    if (posting.length > this.postingLimit) posting.shift();
  }

  /** The event no longer carries `key`. */
  private leave(key: number, h: number): void {
    const n = (this.carriers.get(key) ?? 1) - 1;
    if (n > 0) this.carriers.set(key, n);
    else this.carriers.delete(key);
    const posting = this.postings.get(key);
    if (!posting) return;
    dropFrom(posting, h);
    if (posting.length === 0) this.postings.delete(key);
  }
}

/** Takes `h` out of a posting (at most postingLimit long, so the scan is short). */
function dropFrom(posting: number[], h: number): void {
  const at = posting.lastIndexOf(h);
  if (at >= 0) posting.splice(at, 1);
}

/** The keys in ascending order, each once. */
function ascendingUnique(keys: readonly number[]): Int32Array {
  const sorted = Int32Array.from(keys).sort();
  let n = 0;
  for (let i = 0; i < sorted.length; i++) if (i === 0 || sorted[i] !== sorted[n - 1]) sorted[n++] = sorted[i]!;
  return sorted.slice(0, n);
}
