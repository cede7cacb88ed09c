/**
 * Extended BCubed for overlapping clusterings (Amigó, Gonzalo, Artiles & Verdejo 2009,
 * "A comparison of extrinsic clustering evaluation metrics based on formal constraints",
 * Information Retrieval 12(4), section 5): every item may belong to several categories
 * (gold events) and several clusters (system events).
 *
 *   Multiplicity precision of items e, e' sharing at least one cluster:
 *     min(|C(e) ∩ C(e')|, |L(e) ∩ L(e')|) / |C(e) ∩ C(e')|
 *   Multiplicity recall of items e, e' sharing at least one category:
 *     min(|C(e) ∩ C(e')|, |L(e) ∩ L(e')|) / |L(e) ∩ L(e')|
 *   Precision = mean over items e of the mean over e' sharing a cluster with e (e' = e included);
 *   recall likewise over e' sharing a category.
 *
 * An item the system leaves out (or the gold lacks) has no clusters (categories): its
 * pairs then contribute 0, and it is averaged only on the side where it exists.
 */
import { type Score, f1 } from './partition-metrics.js';

/** Item → the set of clusters (or categories) it belongs to. */
export type Memberships = ReadonlyMap<string, ReadonlySet<string>>;

/** Extended BCubed precision, recall and F1. */
export function extendedBcubed(gold: Memberships, system: Memberships): Score {
  const precision = side(system, gold);
  const recall = side(gold, system);
  return { recall, precision, f1: f1(recall, precision) };
}

/**
 * Mean over items of `by` of the multiplicity score against `other`, normalised by shared
 * `by` memberships. Items with the same memberships on both sides score alike, so they are
 * counted together: the pairs visited are pairs of such signatures sharing a `by` group, not
 * pairs of items (a giant cluster of a thousand mentions of a few gold events is a few
 * signatures, not a million pairs). Exactly the same sums as item by item.
 */
function side(by: Memberships, other: Memberships): number {
  interface Signature {
    by: ReadonlySet<string>;
    other: ReadonlySet<string>;
    count: number;
  }
  const signatures = new Map<string, Signature>();
  for (const [item, groups] of by) {
    if (groups.size === 0) continue;
    const theirs = other.get(item) ?? EMPTY;
    const key = `${[...groups].sort().join('\u0001')}\u0000${[...theirs].sort().join('\u0001')}`;
    const found = signatures.get(key);
    if (found) found.count++;
    else signatures.set(key, { by: groups, other: theirs, count: 1 });
  }
  const list = [...signatures.values()];
  // Signatures of each group of `by`, to visit only pairs that share one.
  const members = new Map<string, number[]>();
  list.forEach((sig, i) => {
    for (const g of sig.by) {
      const m = members.get(g);
      if (m) m.push(i);
      else members.set(g, [i]);
    }
  });
  // An item in one group with at most one group on the other side (most items) pairs with
  // each member of its group for 1 if the member has its other group too, else 0: these
  // sums are counts per group, and need no visit of the group's members.
  const groupCount = new Map<string, number>();
  const withOther = new Map<string, Map<string, number>>();
  for (const sig of list)
    for (const g of sig.by) {
      groupCount.set(g, (groupCount.get(g) ?? 0) + sig.count);
      const row = withOther.get(g) ?? new Map<string, number>();
      for (const o of sig.other) row.set(o, (row.get(o) ?? 0) + sig.count);
      withOther.set(g, row);
    }
  const stamp = new Int32Array(list.length).fill(-1);
  let total = 0;
  let items = 0;
  list.forEach((e, i) => {
    if (e.by.size === 1 && e.other.size <= 1) {
      const [g] = e.by;
      const [o] = e.other;
      total += (e.count * (o === undefined ? 0 : withOther.get(g!)!.get(o)!)) / groupCount.get(g!)!;
      items += e.count;
      return;
    }
    let sum = 0;
    let partners = 0;
    for (const g of e.by) {
      for (const j of members.get(g)!) {
        if (stamp[j] === i) continue;
        stamp[j] = i;
        const x = list[j]!;
        const sharedBy = intersection(e.by, x.by);
        sum += (x.count * Math.min(sharedBy, intersection(e.other, x.other))) / sharedBy;
        partners += x.count;
      }
    }
    total += (e.count * sum) / partners;
    items += e.count;
  });
  return items === 0 ? 0 : total / items;
}

const EMPTY: ReadonlySet<string> = new Set();

function intersection(a: ReadonlySet<string>, b: ReadonlySet<string>): number {
  let n = 0;
  for (const x of a) if (b.has(x)) n++;
  return n;
}
