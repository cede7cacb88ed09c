/**
 * Finds the earlier article an article copies with light edits (a news agency's story
 * republished by several outlets under their own headline, with a line added or cut).
 * Locality-sensitive hashing over MinHash sketches (the banding of Leskovec, Rajaraman &
 * Ullman, Mining of Massive Datasets, ch. 3): 126 of the 128 positions are cut into 42
 * bands of 3; two articles become candidates when one band is identical, which for Jaccard
 * similarity s happens with probability 1 - (1 - s^3)^42 (0.94 at s = 0.4, 0.996 at 0.5,
 * 0.005 at 0.05); each candidate is then checked with the whole sketch. Only articles
 * published within the window are kept, so the index stays the size of a few days of news.
 */
import { estimateJaccard, fmix32 } from './minhash.js';

const BANDS = 42;
const ROWS = 3;
/** Entries read per band bucket at most, newest first. */
const BUCKET_SCAN = 64;

/** Settings (config `copies`). */
export interface CopyOptions {
  /** Estimated Jaccard similarity of the shingle sets at or above which an article is a copy. */
  nearThreshold: number;
  /** Articles further apart in time than this are never copies of one another. */
  windowDays: number;
}

interface Entry {
  id: string;
  time: number;
  sketch: Uint32Array;
  keys: number[];
}

/** A copy found: the original and the estimated similarity. */
export interface CopyMatch {
  original: string;
  similarity: number;
}

export class CopyIndex {
  private readonly buckets = new Map<number, Entry[]>();
  private readonly entries: Entry[] = [];
  private newest = -Infinity;

  constructor(private readonly o: CopyOptions) {}

  /** Entries held (for statistics and tests). */
  get size(): number {
    return this.entries.length;
  }

  /** The earlier article within the window that `sketch` copies most closely, if any reaches the threshold. */
  find(sketch: Uint32Array, time: number): CopyMatch | null {
    return this.search(sketch, bandKeys(sketch), time);
  }

  /** find(), then add(): the band keys are worked out once (the admission path). */
  findThenAdd(id: string, sketch: Uint32Array, time: number): CopyMatch | null {
    const keys = bandKeys(sketch);
    const match = this.search(sketch, keys, time);
    this.insert({ id, time, sketch, keys });
    return match;
  }

  private search(sketch: Uint32Array, keys: readonly number[], time: number): CopyMatch | null {
    const window = this.o.windowDays * 86_400_000;
    let best: (CopyMatch & { time: number }) | null = null;
    const seen = new Set<string>();
    for (const key of keys) {
      const bucket = this.buckets.get(key);
      if (!bucket) continue;
      // Newest first, and at most BUCKET_SCAN of them: a band shared by thousands of articles
      // (boilerplate every item of a feed repeats) would otherwise make admission quadratic.
      // A copy's original is recent, and a true copy shares most of its 42 bands, so it is
      // met in another band if this one is crowded.
      for (let i = bucket.length - 1, scanned = 0; i >= 0 && scanned < BUCKET_SCAN; i--, scanned++) {
        const e = bucket[i]!;
        if (seen.has(e.id) || Math.abs(e.time - time) > window) continue;
        seen.add(e.id);
        const similarity = estimateJaccard(sketch, e.sketch);
        if (similarity < this.o.nearThreshold) continue;
        // The closest wins; on a tie, the older (the original rather than another copy of it).
        if (
          !best ||
          similarity > best.similarity ||
          (similarity === best.similarity && (e.time < best.time || (e.time === best.time && e.id < best.original)))
        ) {
          best = { original: e.id, similarity, time: e.time };
        }
      }
    }
    return best ? { original: best.original, similarity: best.similarity } : null;
  }

  /** Adds an article; entries that fell out of the window are dropped as time moves on. */
  add(id: string, sketch: Uint32Array, time: number): void {
    this.insert({ id, time, sketch, keys: bandKeys(sketch) });
  }

  private insert(e: Entry): void {
    const time = e.time;
    this.entries.push(e);
    for (const k of e.keys) {
      const list = this.buckets.get(k);
      if (list) list.push(e);
      else this.buckets.set(k, [e]);
    }
    if (time > this.newest) {
      this.newest = time;
      this.prune();
    }
  }

  /** Forgets everything (before loading again from the store). */
  clear(): void {
    this.buckets.clear();
    this.entries.length = 0;
    this.newest = -Infinity;
  }

  private prune(): void {
    // Entries arrive roughly in time order; drop from the front while they are out of the window.
    const limit = this.newest - 2 * this.o.windowDays * 86_400_000;
    let cut = 0;
    while (cut < this.entries.length && this.entries[cut]!.time < limit) cut++;
    if (cut < 256 && cut < this.entries.length / 4) return;
    for (const e of this.entries.splice(0, cut)) {
      for (const k of e.keys) {
        const list = this.buckets.get(k)!;
        const rest = list.filter((x) => x !== e);
        if (rest.length) this.buckets.set(k, rest);
        else this.buckets.delete(k);
      }
    }
  }
}

/** One number per band: its rows and its position hashed together (a rare collision only adds a candidate, which the whole sketch then checks). */
function bandKeys(sketch: Uint32Array): number[] {
  const keys: number[] = [];
  for (let b = 0; b < BANDS; b++) {
    let k = fmix32(b + 0x27d4eb2f);
    for (let r = 0; r < ROWS; r++) k = fmix32(k ^ sketch[b * ROWS + r]!);
    keys.push(k);
  }
  return keys;
}
