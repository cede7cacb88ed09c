/**
 * The candidate index: which events might a new mention report? An inverted index from
 * keys (a mention's most distinctive hashed terms, its participants and places) to the
 * events registered under them, plus a list of the most recently touched events.
 *
 * Each posting keeps at most `postingLimit` events, the most recently touched last, so a
 * lookup costs O(keys x postingLimit) however long the history grows. Only very common
 * keys ever reach the limit; an old event stays reachable through its rarer keys, which is
 * how a sentence today finds last month's event from another story.
 *
 *   key ──► [ev_old … ev_recent]     (append on touch; drop the front past the limit)
 */

/** A key with the weight its vote carries. */
export interface WeightedKey {
  key: string;
  weight: number;
}

const RECENT = 'r:';

/** Inverted index over event keys. */
export class CandidateIndex {
  private readonly postings = new Map<string, string[]>();
  /** Number of events that ever carried each participant/place key (for rarity). */
  private readonly keyEvents = new Map<string, number>();

  constructor(private readonly postingLimit: number) {}

  /** Registers (or refreshes) an event under keys, and as recently touched. */
  add(eventId: string, keys: readonly string[]): void {
    for (const key of keys) this.touch(key, eventId);
    this.touch(RECENT, eventId);
  }

  /** Counts one more event carrying a participant or place key. */
  countKey(key: string): void {
    this.keyEvents.set(key, (this.keyEvents.get(key) ?? 0) + 1);
  }

  /** How many events carry a key. */
  eventsWith(key: string): number {
    return this.keyEvents.get(key) ?? 0;
  }

  /** Up to `limit` candidate event ids, most votes first (ties: most recent first). */
  lookup(keys: readonly WeightedKey[], limit: number, recentWeight: number): string[] {
    const votes = new Map<string, number>();
    const recency = new Map<string, number>();
    const recent = this.postings.get(RECENT) ?? [];
    for (let i = 0; i < recent.length; i++) {
      const id = recent[i]!;
      recency.set(id, i);
      // Recent events get a small vote that decays along the list, so they fill free slots.
      votes.set(id, recentWeight * (i + 1) / recent.length);
    }
    for (const { key, weight } of keys) {
      const posting = this.postings.get(key);
      if (!posting) continue;
      for (const id of posting) votes.set(id, (votes.get(id) ?? 0) + weight);
    }
    return [...votes]
      .sort((a, b) => b[1] - a[1] || (recency.get(b[0]) ?? -1) - (recency.get(a[0]) ?? -1) || (a[0] < b[0] ? -1 : 1))
      .slice(0, limit)
      .map(([id]) => id);
  }

  /** Number of keys held, for statistics. */
  get keys(): number {
    return this.postings.size;
  }

  private touch(key: string, eventId: string): void {
    let posting = this.postings.get(key);
    if (!posting) {
      posting = [];
      this.postings.set(key, posting);
    }
    const at = posting.lastIndexOf(eventId);
    if (at === posting.length - 1 && at >= 0) return;
    if (at >= 0) posting.splice(at, 1);
    posting.push(eventId);
    if (posting.length > this.postingLimit) posting.shift();
  }
}
