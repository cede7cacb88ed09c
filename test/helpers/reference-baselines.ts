/**
 * The baselines as first written: every pair and every event scanned. Kept here as the
 * reference the index-based versions in src/eval/baselines.ts must agree with exactly.
 */
import type { EmbeddedMention, SparseVector, Vector } from '../../src/records.js';
import { mentionSpan } from '../../src/link/event-state.js';
import { EVENT_WORDS } from '../../src/text/lexicon.js';
import type { Clustering } from '../../src/eval/baselines.js';

const keyOf = (m: EmbeddedMention): string => `${m.articleId}#${m.sentenceIndex}`;

/** Shared event-word lemma plus content-word overlap, then transitive closure. */
export function lexicalOverlapByPairs(mentions: readonly EmbeddedMention[], minJaccard = 0.25): Clustering {
  const terms = mentions.map((m) => new Set(m.terms));
  const parent = mentions.map((_, i) => i);
  const find = (i: number): number => (parent[i] === i ? i : (parent[i] = find(parent[i]!)));
  // Only pairs sharing an event-word lemma can link: index mentions by those lemmas.
  const byLemma = new Map<string, number[]>();
  terms.forEach((ts, i) => {
    for (const t of ts) if (EVENT_WORDS.has(t)) byLemma.set(t, [...(byLemma.get(t) ?? []), i]);
  });
  const tried = new Set<number>();
  for (const list of byLemma.values()) {
    for (let x = 0; x < list.length; x++) {
      for (let y = x + 1; y < list.length; y++) {
        const i = list[x]!;
        const j = list[y]!;
        const pair = i * mentions.length + j;
        if (tried.has(pair)) continue;
        tried.add(pair);
        let inter = 0;
        for (const t of terms[i]!) if (terms[j]!.has(t)) inter++;
        const union = terms[i]!.size + terms[j]!.size - inter;
        if (union > 0 && inter / union >= minJaccard) parent[find(i)] = find(j);
      }
    }
  }
  return new Map(mentions.map((m, i) => [keyOf(m), [`lex:${find(i)}`]]));
}

/** Online centroid clustering with a threshold and time decay, scanning every event. */
export function onlineCentroidByScan(
  byArticle: readonly (readonly EmbeddedMention[])[],
  threshold: number,
  halfLifeDays: number,
): Clustering {
  const events: { sum: Map<number, number>; norm: number; day: number }[] = [];
  const out: Clustering = new Map();
  for (const mentions of byArticle) {
    for (const m of mentions) {
      const v = m.vector as SparseVector;
      const day = mentionSpan(m)[1];
      let best = -1;
      let bestScore = -Infinity;
      events.forEach((e, i) => {
        if (e.norm === 0) return;
        let dot = 0;
        for (let k = 0; k < v.indices.length; k++) dot += (e.sum.get(v.indices[k]!) ?? 0) * v.values[k]!;
        const s = (dot / e.norm) * Math.pow(0.5, Math.abs(day - e.day) / halfLifeDays);
        if (s > bestScore) {
          bestScore = s;
          best = i;
        }
      });
      if (best < 0 || bestScore < threshold) {
        events.push({ sum: new Map(), norm: 0, day });
        best = events.length - 1;
      }
      const e = events[best]!;
      for (let k = 0; k < v.indices.length; k++) e.sum.set(v.indices[k]!, (e.sum.get(v.indices[k]!) ?? 0) + v.values[k]!);
      let sq = 0;
      for (const w of e.sum.values()) sq += w * w;
      e.norm = Math.sqrt(sq);
      out.set(keyOf(m), [`online:${best}`]);
    }
  }
  return out;
}

/** Cosine of two L2-normalised vectors. */
function dot(a: Vector, b: Vector): number {
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

/** Average-link agglomerative clustering over every pair, cut where the average similarity falls below the threshold. */
export function batchAverageLinkByPairs(mentions: readonly EmbeddedMention[], threshold: number, halfLifeDays: number): Clustering {
  const n = mentions.length;
  const out: Clustering = new Map();
  if (n === 0) return out;
  // Similarity of every pair: the quadratic step the online linker avoids.
  const sim = new Float32Array(n * n);
  const spans = mentions.map(mentionSpan);
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      const gap = Math.max(0, spans[j]![0] - spans[i]![1], spans[i]![0] - spans[j]![1]);
      const s = dot(mentions[i]!.vector, mentions[j]!.vector) * Math.pow(0.5, gap / halfLifeDays);
      sim[i * n + j] = s;
      sim[j * n + i] = s;
    }
  }
  const merges = nnChain(sim, n);
  const parent = Array.from({ length: n }, (_, i) => i);
  const find = (i: number): number => (parent[i] === i ? i : (parent[i] = find(parent[i]!)));
  // Average linkage has no inversions, so the cut keeps exactly the merges at or above it.
  for (const [a, b, s] of merges) if (s >= threshold) parent[find(a)] = find(b);
  mentions.forEach((m, i) => out.set(keyOf(m), [`batch:${find(i)}`]));
  return out;
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
