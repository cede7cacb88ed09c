/**
 * The rxjs wiring of the stages. Each stage is one operator with a typed record in and
 * out; an article that leaves early (already stored, rejected) travels on as a finished
 * outcome so that the caller sees exactly one outcome per article, in order.
 *
 *   articles ─► admit ─► analyse ─► detect ─► embed ─► link + commit ─► outcomes
 *
 * Every stage runs one article at a time (concatMap), which is what linking needs (it is
 * serial by nature) and keeps memory flat: the source is pulled no faster than articles
 * are committed.
 */
import { type Observable, type OperatorFunction, concatMap, defer, of } from 'rxjs';
import type { Config } from './config/schema.js';
import { type DetectedArticle, type MentionSelection, detectMentions } from './detect/detect-mentions.js';
import type { Embedder } from './embed/embedder.js';
import { TfidfEmbedder } from './embed/tfidf-embedder.js';
import { describeError } from './errors.js';
import { type EventState, serialiseEvent, toRecord } from './link/event-state.js';
import type { OnlineLinker } from './link/online-linker.js';
import type { Logger } from './logger.js';
import { buildMergeMessages, buildMessages } from './notify/messages.js';
import type { Article, EmbeddedMention } from './records.js';
import type { Store } from './store/store.js';
import { type AnalysedArticle, analyseArticle } from './text/analyse-article.js';
import type { Nlp } from './text/nlp.js';

/** What the pipeline is handed. */
export interface PipelineContext {
  config: Readonly<Config>;
  nlp: Nlp;
  embedder: Embedder;
  linker: OnlineLinker;
  store: Store;
  logger: Logger;
  now: () => Date;
  /** Overrides which sentences become mentions (evaluation); live use leaves it unset. */
  selectMentions?: (article: Article) => MentionSelection;
}

/** What became of one article. */
export interface ArticleOutcome {
  articleId: string;
  outlet: string;
  status: 'stored' | 'duplicate' | 'rejected';
  reason: string | null;
  duplicateOf: string | null;
  sentences: number;
  mentions: number;
  links: number;
  opened: number;
  outletsAdded: number;
  /** Each linked sentence (-1: the whole article) with its events, best first. */
  assignments: { sentenceIndex: number; eventIds: string[] }[];
  /** Merges consolidation made after this article (event `from` now lives in `into`). */
  merges: { from: string; into: string; score: number }[];
}

type Flow<T> = { go: T; done?: undefined } | { go?: undefined; done: ArticleOutcome };

interface EmbeddedArticle extends DetectedArticle {
  embedded: EmbeddedMention[];
  /** What this article added to the TF-IDF document frequencies, committed with it. */
  idf: { docs: number; df: Map<number, number> } | null;
}

/** Runs articles through every stage; emits one outcome per article. */
export function runPipeline(articles$: Observable<Article>, ctx: PipelineContext): Observable<ArticleOutcome> {
  const admit = admitStage(ctx);
  const consolidation = consolidationCadence(ctx);
  return articles$.pipe(
    concatMap((a) => defer(() => admit(a))),
    stage('analyse', ctx, (a: Article) => analyseArticle(ctx.nlp, a)),
    stage('detect', ctx, (a: AnalysedArticle) => detectMentions(a, ctx.config.detect.threshold, ctx.selectMentions?.(a.article))),
    stage('embed', ctx, (a: DetectedArticle) => embedStage(ctx, a)),
    concatMap((f: Flow<EmbeddedArticle>) => (f.done ? of(f.done) : defer(() => linkStage(ctx, f.go, consolidation)))),
  );
}

/** Wraps a stage function so that failures become a rejected outcome instead of ending the stream. */
function stage<A extends AnalysedArticle | Article, B>(name: string, ctx: PipelineContext, fn: (a: A) => B | Promise<B>): OperatorFunction<Flow<A>, Flow<B>> {
  const log = ctx.logger.child({ stage: name });
  return concatMap(async (f: Flow<A>): Promise<Flow<B>> => {
    if (f.done) return f;
    const article: Article = 'article' in f.go ? (f.go as AnalysedArticle).article : (f.go as Article);
    try {
      return { go: await fn(f.go) };
    } catch (err) {
      log.warn({ article: article.id, err: describeError(err) }, 'article rejected');
      return { done: outcome(article, 'rejected', `${name}: ${describeError(err)}`) };
    }
  });
}

/** Drops articles already stored and marks verbatim copies of earlier ones. */
function admitStage(ctx: PipelineContext): (a: Article) => Promise<Flow<Article>> {
  // Articles admitted but not yet committed, so that two copies close together in the
  // stream are recognised even before the first one reaches the store.
  const inFlightIds = new Set<string>();
  const inFlightHashes = new Map<string, string>();
  const INFLIGHT_LIMIT = 10_000;
  return async (a) => {
    if (inFlightIds.has(a.id) || (await ctx.store.hasArticle(a.id))) return { done: outcome(a, 'duplicate', 'already stored') };
    const original = inFlightHashes.get(a.contentHash) ?? (await ctx.store.findByContentHash(a.contentHash));
    if (inFlightIds.size >= INFLIGHT_LIMIT) {
      inFlightIds.clear();
      inFlightHashes.clear();
    }
    inFlightIds.add(a.id);
    if (!inFlightHashes.has(a.contentHash)) inFlightHashes.set(a.contentHash, a.id);
    return { go: original && original !== a.id ? { ...a, duplicateOf: original } : a };
  };
}

async function embedStage(ctx: PipelineContext, a: DetectedArticle): Promise<EmbeddedArticle> {
  ctx.embedder.learn?.(a.sentences.map((s) => ({ text: s.sentence.text, terms: s.terms })));
  // Taken here, not at commit: this stage may run ahead of linking, and each article must
  // commit exactly its own increments so that a crash never stores a later article's.
  const idf = ctx.embedder instanceof TfidfEmbedder ? ctx.embedder.takeDelta() : null;
  const vectors = a.mentions.length ? await ctx.embedder.embed(a.mentions) : [];
  return { ...a, idf, embedded: a.mentions.map((m, i) => ({ ...m, vector: vectors[i]! })) };
}

/**
 * Consolidation runs after every `consolidateEvery` stored articles, counted over the
 * whole store so that a restarted process keeps the same cadence, over the events the
 * last that-many articles touched.
 */
function consolidationCadence(ctx: PipelineContext): () => Promise<ArticleOutcome['merges']> {
  const every = ctx.config.link.consolidateEvery;
  let stored: number | null = null;
  return async () => {
    if (every === 0) return [];
    stored = stored === null ? (await ctx.store.counts()).articles : stored + 1;
    if (stored % every !== 0) return [];
    return consolidate(ctx, await ctx.store.recentEventIds(every));
  };
}

/** Merges the events among `ids` that turn out to be one; each merge is its own commit. */
export async function consolidate(ctx: PipelineContext, ids: Iterable<string>): Promise<ArticleOutcome['merges']> {
  const done: ArticleOutcome['merges'] = [];
  for (const m of ctx.linker.planMerges(ids, ctx.config.link.mergeThreshold)) {
    const merged = ctx.linker.mergedState(m.into, m.from);
    const at = ctx.now().toISOString();
    await ctx.store.commitMerge({
      into: { record: toRecord(merged), outlets: outletRows(merged), state: serialiseEvent(merged) },
      from: m.from, score: m.score, at,
      messages: buildMergeMessages(m, merged, ctx.config.webhooks.subscribers, ctx.now()),
    });
    ctx.linker.applyMerge(merged, m.from);
    done.push(m);
  }
  if (done.length) ctx.logger.child({ stage: 'link' }).debug({ merges: done.length }, 'consolidation merged events');
  return done;
}

function outletRows(e: EventState): { outlet: string; mentions: number; independent: number }[] {
  return [...e.outlets].map(([outlet, [mentions, independent]]) => ({ outlet, mentions, independent }));
}

async function linkStage(ctx: PipelineContext, a: EmbeddedArticle, consolidation: () => Promise<ArticleOutcome['merges']>): Promise<ArticleOutcome> {
  const plan = ctx.linker.plan(a.embedded);
  try {
    const result = await ctx.store.commitArticle({
      article: a.article,
      sentences: a.sentences.map((s, i) => ({ index: s.sentence.index, text: s.sentence.text, start: s.sentence.start, end: s.sentence.end, eventness: a.eventness[i]! })),
      mentions: a.mentions,
      links: plan.links,
      events: plan.events.map((e) => ({ record: toRecord(e), outlets: outletRows(e), state: serialiseEvent(e) })),
      idf: a.idf,
      messages: buildMessages(plan, a.embedded, ctx.config.webhooks.subscribers, ctx.now()),
    });
    if (result === 'already-stored') return outcome(a.article, 'duplicate', 'already stored');
  } catch (err) {
    ctx.logger.child({ stage: 'link' }).error({ article: a.article.id, err: describeError(err) }, 'commit failed; article not stored');
    return outcome(a.article, 'rejected', describeError(err));
  }
  ctx.linker.apply(plan);
  let merges: ArticleOutcome['merges'] = [];
  try {
    merges = await consolidation();
  } catch (err) {
    // The article is stored; a failed merge is retried at the next pass.
    ctx.logger.child({ stage: 'link' }).error({ err: describeError(err) }, 'consolidation failed');
  }
  return {
    ...outcome(a.article, 'stored', null),
    sentences: a.sentences.length,
    mentions: a.mentions.length,
    links: plan.links.length,
    opened: plan.opened.length,
    outletsAdded: plan.outletsAdded.length,
    assignments: assignments(plan.links),
    merges,
  };
}

function assignments(links: readonly { sentenceIndex: number; eventId: string; rank: number }[]): ArticleOutcome['assignments'] {
  const by = new Map<number, { rank: number; eventId: string }[]>();
  for (const l of links) by.set(l.sentenceIndex, [...(by.get(l.sentenceIndex) ?? []), l]);
  return [...by].map(([sentenceIndex, ls]) => ({ sentenceIndex, eventIds: ls.sort((x, y) => x.rank - y.rank).map((l) => l.eventId) }));
}

function outcome(a: Article, status: ArticleOutcome['status'], reason: string | null): ArticleOutcome {
  return { articleId: a.id, outlet: a.outlet, status, reason, duplicateOf: a.duplicateOf, sentences: 0, mentions: 0, links: 0, opened: 0, outletsAdded: 0, assignments: [], merges: [] };
}
