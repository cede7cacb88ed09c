/**
 * Recognises lightly edited copies at admission: each article long enough is sketched
 * (MinHash of its 4-word shingles) and looked up among the recent articles' sketches; the
 * closest earlier article at or above `copies.nearThreshold` is its original. The sketch
 * is held until the article's commit takes it, and the index is rebuilt from the store's
 * recent sketches at start and after a failed commit.
 */
import type { Config } from '../config/schema.js';
import type { Article } from '../records.js';
import type { ArticleLog } from '../store/store.js';
import { type CopyMatch, CopyIndex } from './copy-index.js';
import { shingles, sketch } from './minhash.js';

export class CopyDetector {
  private readonly index: CopyIndex;
  /** Sketches of admitted articles not yet committed. */
  private readonly pending = new Map<string, Uint32Array>();

  constructor(private readonly o: Config['copies']) {
    this.index = new CopyIndex(o);
  }

  /** The earlier article `a` copies with light edits, if any; remembers `a` for the articles after it. */
  admit(a: Article): CopyMatch | null {
    // A malformed article is refused later, with its reason; here it is simply not compared.
    if (!this.o.near || typeof a.text !== 'string' || typeof a.title !== 'string') return null;
    const words = a.text.split(/\s+/).filter(Boolean).length;
    if (words < this.o.minWords) return null;
    const sk = sketch(shingles(`${a.title}\n${a.text}`));
    const time = [a.published, a.fetched].map((t) => (t ? Date.parse(t) : NaN)).find((t) => !Number.isNaN(t)) ?? Date.now();
    const match = this.index.findThenAdd(a.id, sk, time);
    this.pending.set(a.id, sk);
    return match;
  }

  /** The sketch of an admitted article, for its commit (then forgotten here; the index keeps it). */
  sketchOf(id: string): Uint32Array | null {
    const sk = this.pending.get(id) ?? null;
    this.pending.delete(id);
    return sk;
  }

  /** Rebuilds the index from the store's recent sketches. */
  async load(store: Pick<ArticleLog, 'recentSketches'>): Promise<void> {
    this.index.clear();
    this.pending.clear();
    if (!this.o.near) return;
    for (const r of await store.recentSketches(this.o.windowDays)) this.index.add(r.id, r.sketch, r.time);
  }
}
