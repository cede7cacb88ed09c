/**
 * The online linker alone on prepared mentions, article by article, as the link stage
 * runs it, consolidation included (same cadence, same working set, merges then splits):
 * what the link step alone does, for the eval's cross-check and the bench. It keeps, per
 * event, the links a store would hold, and moves them on merges and splits the same way.
 */
import { type LinkerOptions, OnlineLinker } from '../link/online-linker.js';
import type { SplitMember } from '../link/split-event.js';
import type { EmbeddedMention } from '../records.js';
import type { Clustering } from './baselines.js';
import { mentionKey } from './prepare-mentions.js';

/** Consolidation settings on top of the linker's. */
export type LinkPreparedOptions = LinkerOptions & { consolidateEvery: number; mergeThreshold: number };

interface HeldLink {
  rank: number;
  score: number;
}

/** Links every article's mentions in order; returns each mention's events, best first. */
export function linkPrepared(prepared: readonly (readonly EmbeddedMention[])[], options: LinkPreparedOptions): Clustering {
  const linker = new OnlineLinker(options);
  const mentions = new Map<string, EmbeddedMention>();
  // Event → mention key → its link, as the store holds them.
  const links = new Map<string, Map<string, HeldLink>>();
  // Mention key → the events holding a link of it (to list recent events cheaply).
  const eventsOf = new Map<string, Set<string>>();
  const hold = (id: string, k: string, l: HeldLink): void => {
    held(id).set(k, l);
    let s = eventsOf.get(k);
    if (!s) eventsOf.set(k, (s = new Set()));
    s.add(id);
  };
  const release = (id: string, k: string): void => {
    links.get(id)?.delete(k);
    eventsOf.get(k)?.delete(id);
  };
  const held = (id: string): Map<string, HeldLink> => {
    let m = links.get(id);
    if (!m) links.set(id, (m = new Map()));
    return m;
  };
  const every = options.consolidateEvery;
  prepared.forEach((ms, i) => {
    const plan = linker.plan(ms);
    linker.apply(plan);
    for (const m of ms) mentions.set(mentionKey(m.articleId, m.sentenceIndex), m);
    for (const l of plan.links) hold(l.eventId, mentionKey(l.articleId, l.sentenceIndex), { rank: l.rank, score: l.score });
    if (every <= 0 || (i + 1) % every !== 0) return;

    // The events linked from the last `every` articles, as the store would list them.
    const recent = prepared.slice(Math.max(0, i + 1 - every), i + 1).flat().map((m) => mentionKey(m.articleId, m.sentenceIndex));
    const ids = [...new Set(recent.flatMap((k) => [...(eventsOf.get(k) ?? [])]))].sort();
    const gone = new Set<string>();
    for (const m of linker.planMerges(ids, options.mergeThreshold)) {
      const into0 = held(m.into);
      // In the order the store lists them (published, article, sentence), so that the sums come out the same.
      const shared = [...held(m.from)].flatMap(([k, l]) => {
        const kept = into0.get(k);
        return kept ? [{ mention: mentions.get(k)!, links: [kept, l] as const }] : [];
      }).sort((a, b) => cmp(a.mention.published, b.mention.published) || cmp(a.mention.articleId, b.mention.articleId) || a.mention.sentenceIndex - b.mention.sentenceIndex);
      linker.applyMerge(linker.mergedState(m.into, m.from, shared), m.from);
      // A sentence linked to both keeps the better-scoring link (the surviving event's on a tie).
      const into = held(m.into);
      for (const [k, l] of [...held(m.from)]) {
        const kept = into.get(k);
        release(m.from, k);
        if (!kept || kept.score < l.score) hold(m.into, k, l);
      }
      links.delete(m.from);
      gone.add(m.from);
    }
    for (const id of linker.splitCandidates(ids.filter((x) => !gone.has(x)))) {
      const members: SplitMember[] = [...held(id)].map(([k, l]) => ({ mention: mentions.get(k)!, rank: l.rank }))
        .sort((a, b) => cmp(a.mention.published, b.mention.published) || cmp(a.mention.articleId, b.mention.articleId) || a.mention.sentenceIndex - b.mention.sentenceIndex);
      const plan = linker.planSplit(id, members);
      if (!plan) continue;
      linker.applySplit(plan);
      for (const mv of plan.moved) {
        const k = mentionKey(mv.articleId, mv.sentenceIndex);
        const l = held(id).get(k)!;
        release(id, k);
        hold(plan.split.id, k, l);
      }
    }
  });
  const byKey = new Map<string, { id: string; rank: number }[]>();
  for (const [id, ls] of links) {
    for (const [k, l] of ls) byKey.set(k, [...(byKey.get(k) ?? []), { id, rank: l.rank }]);
  }
  const out: Clustering = new Map();
  for (const [k, evs] of byKey) out.set(k, evs.sort((a, b) => a.rank - b.rank || cmp(a.id, b.id)).map((e) => e.id));
  return out;
}

function cmp(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}
