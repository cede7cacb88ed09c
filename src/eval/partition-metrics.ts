/**
 * Coreference partition scores, computed as the reference scorer does (Pradhan et al.
 * 2014, "Scoring coreference partitions of predicted mentions: a reference
 * implementation"; conll/reference-coreference-scorers), including when the key and the
 * response hold different mentions (predicted mentions):
 *
 *   MUC    Vilain et al. 1995: links needed to join each cluster's pieces;
 *   B3     Bagga & Baldwin 1998: per-mention overlap of its key and response clusters;
 *   CEAF   Luo 2005: best one-to-one cluster alignment, mention- (phi3) or entity-based (phi4);
 *   BLANC  Recasens & Hovy 2011, extended to predicted mentions by Luo et al. 2014;
 *   LEA    Moosavi & Strube 2016: link-based, weighted by entity size;
 *   CoNLL  mean of the MUC, B3 and CEAF-e F1 (CoNLL-2011/2012 shared tasks).
 *
 * A partition is a list of clusters of mention ids; no mention may be in two clusters.
 */
import { munkres } from 'munkres';

/** Recall, precision and F1. */
export interface Score {
  recall: number;
  precision: number;
  f1: number;
}

/** A partition: clusters of mention ids. */
export type Partition = readonly (readonly string[])[];

/** All partition scores. */
export interface PartitionScores {
  muc: Score;
  b3: Score;
  ceafm: Score;
  ceafe: Score;
  blanc: Score;
  lea: Score;
  conllF1: number;
}

/** Every score for one key/response pair. */
export function scorePartitions(key: Partition, response: Partition): PartitionScores {
  return {
    ...conllScores(key, response),
    ceafm: ceafScore(key, response, 'mention'),
    blanc: blancScore(key, response),
    lea: leaScore(key, response),
  };
}

/** The three scores CoNLL F1 averages, and their mean: what a threshold sweep needs, at about half the cost. */
export function conllScores(key: Partition, response: Partition): Pick<PartitionScores, 'muc' | 'b3' | 'ceafe' | 'conllF1'> {
  const muc = mucScore(key, response);
  const b3 = b3Score(key, response);
  const ceafe = ceafScore(key, response, 'entity');
  return { muc, b3, ceafe, conllF1: (muc.f1 + b3.f1 + ceafe.f1) / 3 };
}

/** F1 from recall and precision (0 when both are 0). */
export function f1(recall: number, precision: number): number {
  return recall + precision === 0 ? 0 : (2 * recall * precision) / (recall + precision);
}

function score(recall: number, precision: number): Score {
  return { recall, precision, f1: f1(recall, precision) };
}

const ratio = (num: number, den: number): number => (den === 0 ? 0 : num / den);

function clusterOf(p: Partition): Map<string, number> {
  const m = new Map<string, number>();
  p.forEach((c, i) => {
    for (const x of c) {
      if (m.has(x)) throw new Error(`mention ${x} is in two clusters`);
      m.set(x, i);
    }
  });
  return m;
}

/** How many mentions of `cluster` each cluster of the other side holds (mentions it lacks are left out). */
function pieces(cluster: readonly string[], clusterOfOther: Map<string, number>): Map<number, number> {
  const counts = new Map<number, number>();
  for (const x of cluster) {
    const j = clusterOfOther.get(x);
    if (j !== undefined) counts.set(j, (counts.get(j) ?? 0) + 1);
  }
  return counts;
}

/** MUC: for each cluster, its size minus the number of pieces the other partition cuts it into. */
export function mucScore(key: Partition, response: Partition): Score {
  const side = (a: Partition, b: Partition): number => {
    const inB = clusterOf(b);
    let num = 0;
    let den = 0;
    for (const c of a) {
      const pieces = new Set<string>();
      // A mention the other side lacks is a piece of its own.
      for (const x of c) pieces.add(inB.has(x) ? `c${inB.get(x)}` : `m${x}`);
      num += c.length - pieces.size;
      den += c.length - 1;
    }
    return ratio(num, den);
  };
  return score(side(key, response), side(response, key));
}

/** B3: for each mention, the share of its cluster that the other side's cluster of it also holds. */
export function b3Score(key: Partition, response: Partition): Score {
  const side = (a: Partition, b: Partition): number => {
    const inB = clusterOf(b);
    let sum = 0;
    let n = 0;
    for (const c of a) {
      for (const shared of pieces(c, inB).values()) sum += (shared * shared) / c.length;
      n += c.length;
    }
    return ratio(sum, n);
  };
  return score(side(key, response), side(response, key));
}

/**
 * CEAF: the alignment of key and response clusters (each used once) that maximises total
 * similarity, found exactly. Clusters that share no mention have similarity 0 and need no
 * aligning; a cluster overlapping a single other one is settled first where that is safe
 * (`settleLeaves`); Kuhn-Munkres aligns what is left, one connected group at a time.
 */
export function ceafScore(key: Partition, response: Partition, kind: 'mention' | 'entity'): Score {
  const phi = (k: readonly string[], overlap: number, r: readonly string[]): number =>
    kind === 'mention' ? overlap : (2 * overlap) / (k.length + r.length);
  const inR = clusterOf(response);
  // Overlaps between key cluster i and response cluster j.
  const overlap = new Map<number, Map<number, number>>();
  key.forEach((c, i) => {
    for (const x of c) {
      const j = inR.get(x);
      if (j === undefined) continue;
      const row = overlap.get(i) ?? new Map<number, number>();
      row.set(j, (row.get(j) ?? 0) + 1);
      overlap.set(i, row);
    }
  });
  const weight = new Map<number, Map<number, number>>();
  for (const [i, row] of overlap) weight.set(i, new Map([...row].map(([j, n]) => [j, phi(key[i]!, n, response[j]!)])));
  let best = settleLeaves(weight);
  for (const [keys, resps] of components(weight)) {
    const matrix = keys.map((i) => resps.map((j) => -(weight.get(i)?.get(j) ?? 0)));
    for (const [r, c] of munkres(matrix)) best -= matrix[r]![c]!;
  }
  const self = (p: Partition) => p.reduce((s, c) => s + phi(c, c.length, c), 0);
  return score(ratio(best, self(key)), ratio(best, self(response)));
}

/**
 * Aligns the clusters that overlap a single cluster of the other side (leaves), where that
 * is safe, and takes them and their partners out of `weight` (key -> response -> weight);
 * returns the weight aligned. A leaf whose edge is the heaviest of its partner's belongs to
 * some best alignment: in any best one, giving the partner to the leaf instead frees only a
 * cluster that gains at least as much as it loses (the leaf had no other partner). Taking a
 * pair out leaves new leaves, so this runs until none is safe. Chaining clusterings (a
 * threshold sweep's low end) make connected groups of thousands of clusters that are
 * mostly such chains; this leaves Kuhn-Munkres the few cycles.
 */
function settleLeaves(weight: Map<number, Map<number, number>>): number {
  // Both sides as one graph: key i is node `k${i}`, response j is `r${j}`.
  const adj = new Map<string, Map<string, number>>();
  const link = (a: string, b: string, w: number) => {
    const row = adj.get(a) ?? new Map<string, number>();
    row.set(b, w);
    adj.set(a, row);
  };
  for (const [i, row] of weight)
    for (const [j, w] of row) {
      link(`k${i}`, `r${j}`, w);
      link(`r${j}`, `k${i}`, w);
    }
  let aligned = 0;
  const remove = (x: string): string[] => {
    const around = [...(adj.get(x)?.keys() ?? [])];
    for (const y of around) adj.get(y)?.delete(x);
    adj.delete(x);
    return around;
  };
  const queue = [...adj.keys()].filter((x) => adj.get(x)!.size === 1);
  while (queue.length > 0) {
    const leaf = queue.pop()!;
    const edges = adj.get(leaf);
    if (!edges || edges.size !== 1) continue;
    const [partner, w] = [...edges][0]!;
    let heaviest = 0;
    for (const v of adj.get(partner)!.values()) heaviest = Math.max(heaviest, v);
    if (w < heaviest) continue; // it may become safe once the partner's heavier edges go: re-queued then
    aligned += w;
    adj.delete(leaf);
    for (const y of remove(partner)) {
      if (y === leaf) continue;
      const around = adj.get(y)!;
      if (around.size === 0) adj.delete(y);
      // A new leaf; or y lost an edge that may have been heavier than its leaves' edges.
      else if (around.size === 1) queue.push(y);
      else for (const z of around.keys()) if (adj.get(z)!.size === 1) queue.push(z);
    }
  }
  // Write back what is left.
  for (const [i, row] of weight) {
    const edges = adj.get(`k${i}`);
    if (!edges) weight.delete(i);
    else for (const j of row.keys()) if (!edges.has(`r${j}`)) row.delete(j);
  }
  return aligned;
}

/** Connected groups of key and response clusters linked by shared mentions. */
function components(overlap: Map<number, Map<number, number>>): [number[], number[]][] {
  const parent = new Map<string, string>();
  const find = (x: string): string => {
    let r = x;
    while (parent.get(r) !== r) r = parent.get(r)!;
    parent.set(x, r);
    return r;
  };
  const add = (x: string) => {
    if (!parent.has(x)) parent.set(x, x);
  };
  for (const [i, row] of overlap) {
    add(`k${i}`);
    for (const j of row.keys()) {
      add(`r${j}`);
      parent.set(find(`k${i}`), find(`r${j}`));
    }
  }
  const groups = new Map<string, [number[], number[]]>();
  for (const node of parent.keys()) {
    const g = groups.get(find(node)) ?? [[], []];
    (node[0] === 'k' ? g[0] : g[1]).push(Number(node.slice(1)));
    groups.set(find(node), g);
  }
  return [...groups.values()];
}

/** BLANC: the mean of coreference-link and non-coreference-link scores (Luo et al. 2014 for differing mention sets). */
export function blancScore(key: Partition, response: Partition): Score {
  const inK = clusterOf(key);
  const inR = clusterOf(response);
  const pairsIn = (p: Partition) => p.reduce((s, c) => s + (c.length * (c.length - 1)) / 2, 0);
  const total = (p: Partition) => {
    const n = p.reduce((s, c) => s + c.length, 0);
    return (n * (n - 1)) / 2;
  };
  const ck = pairsIn(key);
  const cr = pairsIn(response);
  const nk = total(key) - ck;
  const nr = total(response) - cr;
  // Coreference links in both: pairs in one key cluster and one response cluster.
  let cBoth = 0;
  for (const c of key) {
    for (const n of pieces(c, inR).values()) cBoth += (n * (n - 1)) / 2;
  }
  // Non-coreference links in both: pairs of mentions both sides hold, apart on both sides.
  const common = [...inK.keys()].filter((x) => inR.has(x));
  const m = common.length;
  const sameK = sameClusterPairs(common, inK);
  const sameR = sameClusterPairs(common, inR);
  const sameBoth = sameClusterPairs(common, new Map(common.map((x) => [x, `${inK.get(x)}/${inR.get(x)}`])));
  const nBoth = (m * (m - 1)) / 2 - sameK - sameR + sameBoth;
  const c = score(ratio(cBoth, ck), ratio(cBoth, cr));
  const n = score(ratio(nBoth, nk), ratio(nBoth, nr));
  if (ck === 0 && cr === 0) return n;
  if (nk === 0 && nr === 0) return c;
  return { recall: (c.recall + n.recall) / 2, precision: (c.precision + n.precision) / 2, f1: (c.f1 + n.f1) / 2 };
}

function sameClusterPairs(xs: readonly string[], clusterOfX: Map<string, number | string>): number {
  const counts = new Map<number | string, number>();
  for (const x of xs) counts.set(clusterOfX.get(x)!, (counts.get(clusterOfX.get(x)!) ?? 0) + 1);
  let s = 0;
  for (const n of counts.values()) s += (n * (n - 1)) / 2;
  return s;
}

/**
 * LEA: each cluster weighs its size; it scores the share of its links the other side
 * keeps. A singleton scores 1 when the other side also has it as a singleton (the
 * self-link of the coval implementation, ns-moosavi/coval, coval/eval/evaluator.py).
 */
export function leaScore(key: Partition, response: Partition): Score {
  const side = (a: Partition, b: Partition): number => {
    const inB = clusterOf(b);
    let num = 0;
    let den = 0;
    for (const c of a) {
      let resolution: number;
      if (c.length === 1) {
        const j = inB.get(c[0]!);
        resolution = j !== undefined && b[j]!.length === 1 ? 1 : 0;
      } else {
        let common = 0;
        for (const n of pieces(c, inB).values()) common += (n * (n - 1)) / 2;
        resolution = common / ((c.length * (c.length - 1)) / 2);
      }
      num += c.length * resolution;
      den += c.length;
    }
    return ratio(num, den);
  };
  return score(side(key, response), side(response, key));
}
