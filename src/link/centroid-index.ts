/**
 * Nearest events by centroid, for dense vectors (the transformer embedder): an exact scan
 * while there are few events, and an approximate HNSW index (usearch; Malkov & Yashunin
 * 2018, "Efficient and robust approximate nearest neighbor search using Hierarchical
 * Navigable Small World graphs") once there are more than `annAbove`. Sparse TF-IDF
 * vectors do not come here: the inverted index over their distinctive terms is their
 * sub-linear retrieval.
 */
import usearch from 'usearch';

const { Index, MetricKind, ScalarKind } = usearch;

/** Nearest-centroid search over events. */
export class CentroidIndex {
  private readonly handles = new Map<string, bigint>();
  private readonly ids = new Map<bigint, string>();
  private readonly vectors = new Map<bigint, Float32Array>();
  private ann: InstanceType<typeof Index> | null = null;
  private next = 0n;

  constructor(private readonly annAbove: number) {}

  /** Number of events held. */
  get size(): number {
    return this.vectors.size;
  }

  /** True once the approximate index is in use. */
  get approximate(): boolean {
    return this.ann !== null;
  }

  /** Adds or replaces an event's centroid (any length; normalised here). */
  upsert(eventId: string, centroid: ArrayLike<number>): void {
    let h = this.handles.get(eventId);
    if (h === undefined) {
      h = this.next++;
      this.handles.set(eventId, h);
      this.ids.set(h, eventId);
    } else if (this.ann) {
      this.ann.remove(h);
    }
    // A fresh normalised copy: the index must not see later changes to the caller's array.
    const v = Float32Array.from(centroid);
    let n = 0;
    for (const x of v) n += x * x;
    n = Math.sqrt(n) || 1;
    for (let i = 0; i < v.length; i++) v[i]! /= n;
    this.vectors.set(h, v);
    if (this.ann) this.ann.add(h, v);
    else if (this.vectors.size > this.annAbove) this.build(v.length);
  }

  /** Forgets an event. */
  remove(eventId: string): void {
    const h = this.handles.get(eventId);
    if (h === undefined) return;
    this.handles.delete(eventId);
    this.ids.delete(h);
    this.vectors.delete(h);
    this.ann?.remove(h);
  }

  /** Up to `k` event ids, nearest first. */
  nearest(query: Float32Array, k: number): string[] {
    if (this.vectors.size === 0) return [];
    if (this.ann) {
      // One thread: the linker is serial, and a search is far shorter than a thread hand-off.
      const r = this.ann.search(query, Math.min(k, this.vectors.size), 1);
      return [...r.keys].map((h) => this.ids.get(h)).filter((x): x is string => x !== undefined);
    }
    const scored: [number, bigint][] = [];
    for (const [h, v] of this.vectors) {
      let dot = 0;
      for (let i = 0; i < v.length; i++) dot += v[i]! * query[i]!;
      scored.push([dot, h]);
    }
    scored.sort((a, b) => b[0] - a[0]);
    return scored.slice(0, k).map(([, h]) => this.ids.get(h)!);
  }

  private build(dimensions: number): void {
    // Defaults of usearch for expansion (0 = library default); f32 keeps scores exact enough to rank.
    this.ann = new Index(dimensions, MetricKind.Cos, ScalarKind.F32, 16);
    for (const [h, v] of this.vectors) this.ann.add(h, v);
  }
}
