/** Clusterings of mentions: a link run's answer, the gold's, and the shapes the scorers take. */
import type { ArticleOutcome } from '../pipeline/index.js';
import type { EvalInput } from './eval-input.js';
import type { Clustering } from './baselines.js';
import { mentionKey } from './prepare-mentions.js';

/** Each mention's events as the pipeline left them: links as made, then merges and splits in order. */
export function clusteringOf(outcomes: readonly ArticleOutcome[]): Clustering {
  const assigned: Clustering = new Map();
  const redirect = new Map<string, string>();
  for (const out of outcomes) {
    for (const a of out.assignments) assigned.set(mentionKey(out.articleId, a.sentenceIndex), a.eventIds);
    for (const m of out.merges) redirect.set(m.from, m.into);
    for (const sp of out.splits) {
      for (const mv of sp.moved) {
        const k = mentionKey(mv.articleId, mv.sentenceIndex);
        assigned.set(
          k,
          assigned.get(k)!.map((id) => (follow(redirect, id) === sp.from ? sp.into : id)),
        );
      }
    }
  }
  return new Map([...assigned].map(([k, events]) => [k, [...new Set(events.map((id) => follow(redirect, id)))]]));
}

/** The id an id ends up as, following merges. */
export function follow(redirect: ReadonlyMap<string, string>, id: string): string {
  let e = id;
  while (redirect.has(e)) e = redirect.get(e)!;
  return e;
}

/**
 * Each gold mention's events, the primary one first: the event spanning most articles (a
 * cross-document event), the first in file order on a tie.
 */
export function goldMemberships(input: EvalInput): Clustering {
  const articlesOf = new Map<string, Set<string>>();
  for (const x of input.gold) articlesOf.set(x.event, (articlesOf.get(x.event) ?? new Set()).add(x.article));
  const out: Clustering = new Map();
  for (const x of input.gold) {
    const k = mentionKey(x.article, x.sentence);
    const list = out.get(k) ?? [];
    if (!list.includes(x.event)) list.push(x.event);
    out.set(k, list);
  }
  for (const [k, list] of out) {
    const first = list.reduce((best, e) => (articlesOf.get(e)!.size > articlesOf.get(best)!.size ? e : best), list[0]!);
    out.set(k, [first, ...list.filter((e) => e !== first)]);
  }
  return out;
}

export function restrict(c: Clustering, keep: (key: string) => boolean): Clustering {
  return new Map([...c].filter(([k]) => keep(k)));
}

/** Clusters of mentions by their first (primary) event. */
export function partition(c: Clustering): string[][] {
  const by = new Map<string, string[]>();
  for (const [k, events] of c) {
    const cluster = by.get(events[0]!);
    if (cluster) cluster.push(k);
    else by.set(events[0]!, [k]);
  }
  return [...by.values()];
}

export function toSets(c: Clustering): Map<string, Set<string>> {
  return new Map([...c].map(([k, v]) => [k, new Set(v)]));
}

export function sentenceOf(key: string): number | null {
  const n = Number(key.slice(key.lastIndexOf('#') + 1));
  return n < 0 ? null : n;
}
