/**
 * The admission stage: drops an article already stored (by id or canonical URL) and marks
 * copies of earlier articles, before any text work is spent on it.
 */
import { describeError } from '../errors.js';
import type { Article } from '../records.js';
import type { CopyDetector } from '../copies/copy-detector.js';
import { canonicalUrl } from '../ingest/canonical-url.js';
import { type DetectedWork, type Flow, type PipelineContext, outcomeOf } from './context.js';

/** Drops articles already stored (same id or canonical URL) and marks copies of earlier ones, verbatim or lightly edited. */
export function admitStage(ctx: PipelineContext): (a: Article) => Promise<Flow<Article>> {
  // Articles admitted but not yet committed, so that two copies close together in the
  // stream are recognised even before the first one reaches the store.
  const inFlightIds = new Set<string>();
  const inFlightHashes = new Map<string, string>();
  const inFlightUrls = new Map<string, string>();
  const INFLIGHT_LIMIT = 10_000;
  return async (a) => {
    if (inFlightIds.has(a.id) || (await ctx.store.hasArticle(a.id))) return { done: outcomeOf(a, 'duplicate', 'already stored') };
    // The same article under another id (another guid, a tracking parameter): its canonical URL gives it away.
    const url = canonicalUrl(a.url);
    const sameUrl = url ? (inFlightUrls.get(url) ?? (await ctx.store.findByUrl(url))) : null;
    if (sameUrl && sameUrl !== a.id) return { done: outcomeOf(a, 'duplicate', `already stored as ${sameUrl} (same URL)`) };
    const original = inFlightHashes.get(a.contentHash) ?? (await ctx.store.findByContentHash(a.contentHash));
    if (inFlightIds.size >= INFLIGHT_LIMIT) {
      inFlightIds.clear();
      inFlightHashes.clear();
      inFlightUrls.clear();
    }
    inFlightIds.add(a.id);
    if (!inFlightHashes.has(a.contentHash)) inFlightHashes.set(a.contentHash, a.id);
    if (url && !inFlightUrls.has(url)) inFlightUrls.set(url, a.id);
    let near: ReturnType<CopyDetector['admit']> = null;
    try {
      near = ctx.copies?.admit(a) ?? null;
    } catch (err) {
      // Copy detection is a refinement: an article it cannot read goes on without it.
      ctx.logger.child({ stage: 'admit' }).warn({ article: a.id, err: describeError(err) }, 'copy detection skipped');
    }
    if (original && original !== a.id) return { go: { ...a, duplicateOf: original, copySimilarity: 1 } };
    return { go: near ? { ...a, duplicateOf: near.original, copySimilarity: near.similarity } : a };
  };
}

/**
 * Admission for articles analysed elsewhere (worker processes, the evaluation's prepared
 * input): the same checks as admitStage, in stream order, and the mentions marked as a
 * copy's when admission finds the article to be one.
 */
export function admitWork(ctx: PipelineContext): (work: DetectedWork) => Promise<Flow<DetectedWork>> {
  const admit = admitStage(ctx);
  return async (work) => {
    const admitted = await admit(work.article);
    if (admitted.done) return admitted;
    const article = admitted.go;
    return { go: { ...work, article, mentions: work.mentions.map((m) => ({ ...m, isCopy: article.duplicateOf !== null })) } };
  };
}
