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
import { serialiseEvent, toRecord } from './link/event-state.js';
import type { OnlineLinker } from './link/online-linker.js';
import type { Logger } from './logger.js';
import { buildMessages } from './notify/messages.js';
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
}

type Flow<T> = { go: T; done?: undefined } | { go?: undefined; done: ArticleOutcome };

interface EmbeddedArticle extends DetectedArticle {
  embedded: EmbeddedMention[];
}

/** Runs articles through every stage; emits one outcome per article. */
export function runPipeline(articles$: Observable<Article>, ctx: PipelineContext): Observable<ArticleOutcome> {
  const admit = admitStage(ctx);
  return articles$.pipe(
    concatMap((a) => defer(() => admit(a))),
    stage('analyse', ctx, (a: Article) => analyseArticle(ctx.nlp, a)),
    stage('detect', ctx, (a: AnalysedArticle) => detectMentions(a, ctx.config.detect.threshold, ctx.selectMentions?.(a.article))),
    stage('embed', ctx, (a: DetectedArticle) => embedStage(ctx, a)),
    concatMap((f: Flow<EmbeddedArticle>) => (f.done ? of(f.done) : defer(() => linkStage(ctx, f.go)))),
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
  const vectors = a.mentions.length ? await ctx.embedder.embed(a.mentions) : [];
  return { ...a, embedded: a.mentions.map((m, i) => ({ ...m, vector: vectors[i]! })) };
}

async function linkStage(ctx: PipelineContext, a: EmbeddedArticle): Promise<ArticleOutcome> {
  const plan = ctx.linker.plan(a.embedded);
  const idf = ctx.embedder instanceof TfidfEmbedder ? ctx.embedder.takeDelta() : null;
  try {
    const result = await ctx.store.commitArticle({
      article: a.article,
      sentences: a.sentences.map((s, i) => ({ index: s.sentence.index, text: s.sentence.text, start: s.sentence.start, end: s.sentence.end, eventness: a.eventness[i]! })),
      mentions: a.mentions,
      links: plan.links,
      events: plan.events.map((e) => ({
        record: toRecord(e),
        outlets: [...e.outlets].map(([outlet, [mentions, independent]]) => ({ outlet, mentions, independent })),
        state: serialiseEvent(e),
      })),
      idf,
      messages: buildMessages(plan, a.embedded, ctx.config.webhooks.subscribers, ctx.now()),
    });
    if (result === 'already-stored') return outcome(a.article, 'duplicate', 'already stored');
  } catch (err) {
    ctx.logger.child({ stage: 'link' }).error({ article: a.article.id, err: describeError(err) }, 'commit failed; article not stored');
    return outcome(a.article, 'rejected', describeError(err));
  }
  ctx.linker.apply(plan);
  return {
    ...outcome(a.article, 'stored', null),
    sentences: a.sentences.length,
    mentions: a.mentions.length,
    links: plan.links.length,
    opened: plan.opened.length,
    outletsAdded: plan.outletsAdded.length,
    assignments: assignments(plan.links),
  };
}

function assignments(links: readonly { sentenceIndex: number; eventId: string; rank: number }[]): ArticleOutcome['assignments'] {
  const by = new Map<number, { rank: number; eventId: string }[]>();
  for (const l of links) by.set(l.sentenceIndex, [...(by.get(l.sentenceIndex) ?? []), l]);
  return [...by].map(([sentenceIndex, ls]) => ({ sentenceIndex, eventIds: ls.sort((x, y) => x.rank - y.rank).map((l) => l.eventId) }));
}

function outcome(a: Article, status: ArticleOutcome['status'], reason: string | null): ArticleOutcome {
  return { articleId: a.id, outlet: a.outlet, status, reason, duplicateOf: a.duplicateOf, sentences: 0, mentions: 0, links: 0, opened: 0, outletsAdded: 0, assignments: [] };
}
