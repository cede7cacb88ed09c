/**
 * Baselines the linker is compared with, run on the same mentions with plain TF-IDF vectors
 * (unigrams, smoothed idf: the standard vectors of the trade, not the linker's settings):
 *
 *   all singletons        every mention its own event;
 *   one per subtopic      every mention of a subtopic (else topic) in one event;
 *   lexical overlap       two mentions corefer when they share an event-word lemma and at
 *                         least a quarter of their content words (Jaccard >= 0.25), then
 *                         transitive closure (in the spirit of the same-lemma baselines of
 *                         event coreference work; common practice);
 *   online centroid       online TF-IDF centroid clustering with a similarity threshold and
 *                         time decay against every event (in the style of Miranda et al.
 *                         2018, "Multilingual clustering of streaming news", EMNLP);
 *   batch average-link    agglomerative clustering with average linkage over all pairs of
 *                         mentions (cosine x the same time decay), cut at the threshold;
 *                         the nearest-neighbour-chain algorithm (Murtagh 1983) builds the
 *                         full dendrogram in O(n^2) once, and each threshold is a cut of it.
 *
 * Each gives exactly the answer of the all-pairs, all-events version it replaces
 * (test/helpers/reference-baselines.ts, compared in the tests), found through an inverted
 * index over the vectors' features: an event or mention sharing no feature scores 0, which
 * no threshold above 0 accepts. Sums run over features in the same order as the dot
 * products they replace, so every score is the same number.
 */
import type { EmbeddedMention, SparseVector, Vector } from '../records.js';
import { mentionSpan } from '../link/event-state.js';
import { EVENT_WORDS } from '../text/lexicon.js';

/** Mention key → event ids, best first. */
export type Clustering = Map<string, string[]>;

const keyOf = (m: EmbeddedMention): string => `${m.articleId}#${m.sentenceIndex}`;

/** Every mention alone. */
export function allSingletons(mentions: readonly EmbeddedMention[]): Clustering {
  return new Map(mentions.map((m) => [keyOf(m), [`single:${keyOf(m)}`]]));
}

/** One event per subtopic (falling back to the topic, then to one event for everything). */
export function onePerSubtopic(mentions: readonly EmbeddedMention[], groupOf: (articleId: string) => string | null): Clustering {
  return new Map(mentions.map((m) => [keyOf(m), [`group:${groupOf(m.articleId) ?? 'all'}`]]));
}

/** Shared event-word lemma plus content-word overlap, then transitive closure. */
export function lexicalOverlap(mentions: readonly EmbeddedMention[], minJaccard = 0.25): Clustering {
  // Terms as sorted ids, so an intersection is one merge walk.
  const ids = new Map<string, number>();
  const idOf = (t: string): number => {
    let id = ids.get(t);
    if (id === undefined) ids.set(t, (id = ids.size));
    return id;
  };
  const terms = mentions.map((m) => Int32Array.from(new Set(m.terms.map(idOf))).sort());
  const parent = mentions.map((_, i) => i);
  const find = (i: number): number => (parent[i] === i ? i : (parent[i] = find(parent[i]!)));
  // Only pairs sharing an event-word lemma can link: index mentions by those lemmas.
  const byLemma = new Map<string, number[]>();
  mentions.forEach((m, i) => {
    for (const t of new Set(m.terms)) if (EVENT_WORDS.has(t)) byLemma.set(t, [...(byLemma.get(t) ?? []), i]);
  });
  const lemmasOf = mentions.map((m) => [...new Set(m.terms)].filter((t) => EVENT_WORDS.has(t)));
  // Each pair once: a stamp per later mention instead of a set of every pair tried.
  const seen = new Int32Array(mentions.length).fill(-1);
  for (let i = 0; i < mentions.length; i++) {
    for (const lemma of lemmasOf[i]!) {
      for (const j of byLemma.get(lemma)!) {
        if (j <= i || seen[j] === i) continue;
        seen[j] = i;
        const a = terms[i]!;
        const b = terms[j]!;
        let inter = 0;
        for (let x = 0, y = 0; x < a.length && y < b.length;) {
          if (a[x] === b[y]) {
            inter++;
            x++;
            y++;
          } else if (a[x]! < b[y]!) x++;
          else y++;
        }
        const union = a.length + b.length - inter;
        if (union > 0 && inter / union >= minJaccard) parent[find(i)] = find(j);
      }
    }
  }
  return new Map(mentions.map((m, i) => [keyOf(m), [`lex:${find(i)}`]]));
}

/**
 * Online centroid clustering with a threshold (above 0) and time decay. Each mention is
 * scored against the events sharing a feature with it (an inverted index of the events'
 * features); it joins the best, the earliest on a tie, when that reaches the threshold.
 */
export function onlineCentroid(byArticle: readonly (readonly EmbeddedMention[])[], threshold: number, halfLifeDays: number): Clustering {
  const events: { sum: Map<number, number>; norm: number; day: number }[] = [];
  const postings = new Map<number, number[]>();
  let dot = new Float64Array(1024);
  let mark = new Int32Array(1024).fill(-1);
  const out: Clustering = new Map();
  // Cosine is at most 1, so an event further away in time than this cannot reach the
  // threshold whatever the words: it is passed over without summing (answers unchanged).
  const farDays = threshold > 0 && threshold < 1 ? halfLifeDays * Math.log2(1 / threshold) * (1 + 1e-9) : Infinity;
  let step = 0;
  for (const mentions of byArticle) {
    for (const m of mentions) {
      step++;
      const v = m.vector as SparseVector;
      const day = mentionSpan(m)[1];
      const touched: number[] = [];
      for (let k = 0; k < v.indices.length; k++) {
        const posting = postings.get(v.indices[k]!);
        if (!posting) continue;
        for (const e of posting) {
          if (Math.abs(day - events[e]!.day) > farDays) continue;
          if (mark[e] !== step) {
            mark[e] = step;
            dot[e] = 0;
            touched.push(e);
          }
          dot[e]! += events[e]!.sum.get(v.indices[k]!)! * v.values[k]!;
        }
      }
      touched.sort((a, b) => a - b);
      let best = -1;
      let bestScore = -Infinity;
      for (const e of touched) {
        const ev = events[e]!;
        if (ev.norm === 0) continue;
        const s = (dot[e]! / ev.norm) * Math.pow(0.5, Math.abs(day - ev.day) / halfLifeDays);
        if (s > bestScore) {
          bestScore = s;
          best = e;
        }
      }
      if (best < 0 || bestScore < threshold) {
        events.push({ sum: new Map(), norm: 0, day });
        best = events.length - 1;
        if (best >= dot.length) {
          const grownDot = new Float64Array(dot.length * 2);
          grownDot.set(dot);
          dot = grownDot;
          const grownMark = new Int32Array(mark.length * 2).fill(-1);
          grownMark.set(mark);
          mark = grownMark;
        }
      }
      const e = events[best]!;
      for (let k = 0; k < v.indices.length; k++) {
        const f = v.indices[k]!;
        if (!e.sum.has(f)) {
          let posting = postings.get(f);
          if (!posting) postings.set(f, (posting = []));
          posting.push(best);
        }
        e.sum.set(f, (e.sum.get(f) ?? 0) + v.values[k]!);
      }
      let sq = 0;
      for (const w of e.sum.values()) sq += w * w;
      e.norm = Math.sqrt(sq);
      out.set(keyOf(m), [`online:${best}`]);
    }
  }
  return out;
}

/** Cosine of two L2-normalised vectors. */
export function dot(a: Vector, b: Vector): number {
  if (a.kind === 'dense' && b.kind === 'dense') {
    let s = 0;
    for (let i = 0; i < a.values.length; i++) s += a.values[i]! * b.values[i]!;
    return s;
  }
  if (a.kind !== 'sparse' || b.kind !== 'sparse') return 0;
  let i = 0;
  let j = 0;
  let s = 0;
  while (i < a.indices.length && j < b.indices.length) {
    const x = a.indices[i]!;
    const y = b.indices[j]!;
    if (x === y) s += a.values[i++]! * b.values[j++]!;
    else if (x < y) i++;
    else j++;
  }
  return s;
}

/** The average-link dendrogram of some mentions, to cut at any threshold. */
export interface Dendrogram {
  /** The clustering where merges at or above `threshold` are kept. */
  cut(threshold: number): Clustering;
}

/**
 * Average-link agglomerative clustering over every pair (cosine x time decay), built once.
 * The similarity matrix is filled through an inverted index: each mention's features,
 * ascending, add into every earlier mention that has them, in the order a pairwise dot
 * product would, so the matrix holds the same numbers.
 */
export function averageLinkDendrogram(mentions: readonly EmbeddedMention[], halfLifeDays: number): Dendrogram {
  return dendrogramOf(mentions, averageLinkMerges(mentions, halfLifeDays));
}

/** One merge of average-link clustering: the two mentions' indices standing for their clusters, and the linkage. */
export type Merge = [number, number, number];

/** The merges of average-link clustering (the costly part, run apart from the cuts on a sweep thread). */
export function averageLinkMerges(mentions: readonly EmbeddedMention[], halfLifeDays: number): Merge[] {
  const n = mentions.length;
  const sim = new Float32Array(n * n);
  const spans = mentions.map(mentionSpan);
  const sparse = mentions.every((m) => m.vector.kind === 'sparse');
  if (sparse) {
    const postings = new Map<number, { mentions: number[]; values: number[] }>();
    const acc = new Float64Array(n);
    // Spans are whole days, so the decay takes few values: each is computed once, the same number.
    const decays = new Map<number, number>();
    const decay = (gap: number): number => {
      let d = decays.get(gap);
      if (d === undefined) decays.set(gap, (d = Math.pow(0.5, gap / halfLifeDays)));
      return d;
    };
    const touched: number[] = [];
    const stamp = new Int32Array(n).fill(-1);
    for (let i = 0; i < n; i++) {
      const v = mentions[i]!.vector as SparseVector;
      for (let k = 0; k < v.indices.length; k++) {
        const posting = postings.get(v.indices[k]!);
        if (!posting) continue;
        const w = v.values[k]!;
        for (let p = 0; p < posting.mentions.length; p++) {
          const j = posting.mentions[p]!;
          if (stamp[j] !== i) {
            stamp[j] = i;
            acc[j] = 0;
            touched.push(j);
          }
          acc[j]! += posting.values[p]! * w;
        }
      }
      // A pair sharing no feature keeps the matrix's 0.
      for (const j of touched) {
        const gap = Math.max(0, spans[i]![0] - spans[j]![1], spans[j]![0] - spans[i]![1]);
        const s = acc[j]! * decay(gap);
        sim[j * n + i] = s;
        sim[i * n + j] = s;
      }
      touched.length = 0;
      for (let k = 0; k < v.indices.length; k++) {
        let posting = postings.get(v.indices[k]!);
        if (!posting) postings.set(v.indices[k]!, (posting = { mentions: [], values: [] }));
        posting.mentions.push(i);
        posting.values.push(v.values[k]!);
      }
    }
  } else {
    for (let i = 0; i < n; i++) {
      for (let j = i + 1; j < n; j++) {
        const gap = Math.max(0, spans[j]![0] - spans[i]![1], spans[i]![0] - spans[j]![1]);
        const s = dot(mentions[i]!.vector, mentions[j]!.vector) * Math.pow(0.5, gap / halfLifeDays);
        sim[i * n + j] = s;
        sim[j * n + i] = s;
      }
    }
  }
  return n > 1 ? nnChain(sim, n) : [];
}

/** The dendrogram the merges make, to cut at any threshold. */
export function dendrogramOf(mentions: readonly EmbeddedMention[], merges: readonly Merge[]): Dendrogram {
  const n = mentions.length;
  return {
    cut(threshold) {
      const parent = Array.from({ length: n }, (_, i) => i);
      const find = (i: number): number => (parent[i] === i ? i : (parent[i] = find(parent[i]!)));
      // Average linkage has no inversions, so the cut keeps exactly the merges at or above it.
      for (const [a, b, s] of merges) if (s >= threshold) parent[find(a)] = find(b);
      return new Map(mentions.map((m, i) => [keyOf(m), [`batch:${find(i)}`]]));
    },
  };
}

/** Average-link clustering cut at `threshold` (one dendrogram, one cut). */
export function batchAverageLink(mentions: readonly EmbeddedMention[], threshold: number, halfLifeDays: number): Clustering {
  return averageLinkDendrogram(mentions, halfLifeDays).cut(threshold);
}

/**
 * Nearest-neighbour chain (Murtagh 1983): follows nearest neighbours until two clusters
 * are each other's nearest, merges them (Lance-Williams update for average linkage on
 * similarities), and continues; every merge is found in O(n), n - 1 merges in all.
 */
function nnChain(sim: Float32Array, n: number): [number, number, number][] {
  const size = new Float64Array(n).fill(1);
  const active = new Uint8Array(n).fill(1);
  let remaining = n;
  const merges: [number, number, number][] = [];
  const chain: number[] = [];
  while (remaining > 1) {
    if (chain.length === 0) chain.push(active.indexOf(1));
    const a = chain[chain.length - 1]!;
    const prev = chain.length >= 2 ? chain[chain.length - 2]! : -1;
    let b = -1;
    let best = -Infinity;
    for (let k = 0; k < n; k++) {
      if (!active[k] || k === a) continue;
      const s = sim[a * n + k]!;
      // Ties go to the previous chain element, which guarantees the chain ends.
      if (s > best || (s === best && k === prev)) {
        best = s;
        b = k;
      }
    }
    if (b === prev) {
      chain.pop();
      chain.pop();
      merges.push([a, b, best]);
      const sa = size[a]!;
      const sb = size[b]!;
      for (let k = 0; k < n; k++) {
        if (!active[k] || k === a || k === b) continue;
        const s = (sa * sim[a * n + k]! + sb * sim[b * n + k]!) / (sa + sb);
        sim[a * n + k] = s;
        sim[k * n + a] = s;
      }
      size[a] = sa + sb;
      active[b] = 0;
      remaining--;
    } else {
      chain.push(b);
    }
  }
  return merges;
}
