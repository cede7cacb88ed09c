/** A link run's answer as a clustering of mentions, and the ids events end up as after merges. */
import type { ArticleOutcome } from '../pipeline/index.js';
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
