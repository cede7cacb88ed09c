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

/** Mean over items of `by` of the multiplicity score against `other`, normalised by shared `by` memberships. */
function side(by: Memberships, other: Memberships): number {
  // Items of each group of `by`, to visit only pairs that share one.
  const members = new Map<string, string[]>();
  for (const [item, groups] of by) for (const g of groups) members.set(g, [...(members.get(g) ?? []), item]);
  let total = 0;
  let items = 0;
  for (const [e, groups] of by) {
    if (groups.size === 0) continue;
    const partners = new Set<string>();
    for (const g of groups) for (const x of members.get(g)!) partners.add(x);
    let sum = 0;
    for (const x of partners) {
      const sharedBy = intersection(groups, by.get(x)!);
      const sharedOther = intersection(other.get(e) ?? EMPTY, other.get(x) ?? EMPTY);
      sum += Math.min(sharedBy, sharedOther) / sharedBy;
    }
    total += sum / partners.size;
    items++;
  }
  return items === 0 ? 0 : total / items;
}

const EMPTY: ReadonlySet<string> = new Set();

function intersection(a: ReadonlySet<string>, b: ReadonlySet<string>): number {
  let n = 0;
  for (const x of a) if (b.has(x)) n++;
  return n;
}
