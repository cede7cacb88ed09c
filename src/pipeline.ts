/**
 * The rxjs wiring of the stages. Each stage is one operator with a typed record in and
 * out; an article that leaves early (already stored, rejected) travels on as a finished
 * outcome so that the caller sees exactly one outcome per article, in order.
 *
 *   articles ─► admit ─► analyse ─► detect ─► (group) ─► embed ─► link + commit ─► outcomes
 *
 * Every stage takes one item at a time (concatMap): one article up to detection, then a
 * group of articles (up to GROUP_MAX, or what arrived within GROUP_MS) for embedding,
 * linking and committing. Linking is serial by nature. The one exception is analysis on
 * worker threads, which runs a few articles ahead and hands them on in input order.
 */
import { type Observable, type OperatorFunction, bufferTime, concatMap, defer, filter, from, tap } from 'rxjs';
import type { Config } from './config/schema.js';
import { type DetectedArticle, type MentionSelection, detectMentions } from './detect/detect-mentions.js';
import type { Embedder } from './embed/embedder.js';
import { describeError } from './errors.js';
import { type EventState, deserialiseEvent, serialiseEvent, toRecord } from './link/event-state.js';
import type { LinkPlan, OnlineLinker } from './link/online-linker.js';
import type { Logger } from './logger.js';
import { buildMergeMessages, buildMessages, buildSplitMessages, buildStoryMergeMessages, buildStoryMessages } from './notify/messages.js';
import type { Article, DenseVector, EmbeddedMention, Vector } from './records.js';
import type { StoryLinker, StoryPlan } from './link/story-linker.js';
import { type StoryArticle, deserialiseStory, serialiseStory, storyRecord } from './link/story-state.js';
import { type ArticleCommit, type CommitResult, ERASED_LABEL, type Store, drawnFrom } from './store/store.js';
import { orderedMergeMap } from './ordered-merge-map.js';
import { type AnalysedArticle, analyseArticle } from './text/analyse-article.js';
import { ANALYSIS_AHEAD, type AnalysisPool } from './text/analysis-pool.js';
import type { Nlp } from './text/nlp.js';
import type { CopyDetector } from './copies/copy-detector.js';
import { canonicalUrl } from './ingest/canonical-url.js';

/** What the pipeline is handed. */
export interface PipelineContext {
  config: Readonly<Config>;
  nlp: Nlp;
  embedder: Embedder;
  linker: OnlineLinker;
  /** Which story each article joins (whole-article evidence). */
  stories: StoryLinker;
  store: Store;
  logger: Logger;
  now: () => Date;
  /** Analysis threads; without them articles are analysed on the main thread with `nlp`. */
  analysis?: AnalysisPool;
  /** Overrides which sentences become mentions (evaluation); live use leaves it unset. */
  selectMentions?: (article: Article) => MentionSelection;
  /** Recent articles' MinHash sketches, to recognise edited copies; without it only verbatim copies are. */
  copies?: CopyDetector;
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
  /** Splits consolidation made after this article (the `moved` mentions left `from` for the new event `into`). */
  splits: SplitOutcome[];
  /** The story the article joined or opened (null when not stored). */
  story: string | null;
  /** Whether the article opened its story. */
  storyOpened: boolean;
  /** Story merges consolidation made after this article (story `from` now lives in `into`). */
  storyMerges: { from: string; into: string; score: number }[];
}

/** One split as reported to callers. */
export interface SplitOutcome {
  from: string;
  into: string;
  score: number;
  moved: { articleId: string; sentenceIndex: number }[];
}

/** What one consolidation pass changed. */
export interface ConsolidationOutcome {
  merges: ArticleOutcome['merges'];
  splits: SplitOutcome[];
  storyMerges: ArticleOutcome['storyMerges'];
}

/** Largest group of articles committed in one transaction. */
const GROUP_MAX = 32;
/** Longest an article waits for its group, ms (live feeds trickle; a replay fills groups at once). */
const GROUP_MS = 50;

/** An article still on its way (`go`), or one that has finished early (`done`). */
export type Flow<T> = { go: T; done?: undefined } | { go?: undefined; done: ArticleOutcome };

/** A detected article, with its mentions' vectors when a worker process embedded them already. */
export interface DetectedWork extends DetectedArticle {
  vectors?: Vector[];
}

interface EmbeddedArticle extends DetectedArticle {
  embedded: EmbeddedMention[];
  /** What this article added to the TF-IDF document frequencies, committed with it. */
  idf: { docs: number; df: Map<number, number> } | null;
  /** The article as its story sees it; null when there is no vector to judge it by. */
  storyInput: StoryArticle | null;
}

/**
 * Runs articles through every stage; emits one outcome per article. At most a window of
 * articles is between admission and its outcome: rxjs pushes, and without the window a
 * fast source (a large feed, analysis threads running ahead) piles analysed articles up in
 * front of the serial link stage (a 10,000-item feed once held 370 MB of them).
 */
export function runPipeline(articles$: Observable<Article>, ctx: PipelineContext): Observable<ArticleOutcome> {
  return defer(() => {
    const admit = admitStage(ctx);
    const window = new Window((ctx.analysis ? ctx.analysis.threads * ANALYSIS_AHEAD : 0) + 2 * GROUP_MAX);
    return articles$.pipe(
      concatMap((a) => defer(async () => {
        await window.enter();
        return admit(a);
      })),
      ...analyseAndDetect(ctx),
      linkStages(ctx),
      tap(() => window.leave()),
    );
  });
}

/** The analysis and detection stages (analysis on threads when the context has them). */
function analyseAndDetect(ctx: PipelineContext): [OperatorFunction<Flow<Article>, Flow<AnalysedArticle>>, OperatorFunction<Flow<AnalysedArticle>, Flow<DetectedWork>>] {
  return [
    // With analysis threads, articles are analysed ahead of the link stage (enough to keep
    // the threads busy while the main thread commits a group).
    ctx.analysis
      ? stage('analyse', ctx, (a: Article) => ctx.analysis!.analyse(a), ctx.analysis.threads * ANALYSIS_AHEAD)
      : stage('analyse', ctx, (a: Article) => analyseArticle(ctx.nlp, a)),
    stage('detect', ctx, (a: AnalysedArticle) => detectMentions(a, ctx.config.detect.threshold, ctx.selectMentions?.(a.article))),
  ];
}

/** A counting semaphore: `enter` waits while `size` articles are in flight. */
class Window {
  private inside = 0;
  private readonly waiting: (() => void)[] = [];

  constructor(private readonly size: number) {}

  enter(): Promise<void> | void {
    if (this.inside < this.size) {
      this.inside++;
      return;
    }
    return new Promise<void>((resolve) => this.waiting.push(resolve));
  }

  leave(): void {
    // A waiter takes the freed place directly, so the count stays as it is.
    const next = this.waiting.shift();
    if (next) next();
    else this.inside--;
  }
}

/**
 * The serial end of the pipeline: embed, link and commit detected articles in groups. The
 * linker process of a scale-out deployment feeds it from the queue of analysed articles.
 */
export function linkStages(ctx: PipelineContext): OperatorFunction<Flow<DetectedWork>, ArticleOutcome> {
  const cadence = new ConsolidationCadence(ctx);
  return (detected$) => detected$.pipe(
    // Groups of up to GROUP_MAX articles, or what arrived within GROUP_MS: one embedding
    // batch and one commit per group.
    bufferTime(GROUP_MS, null, GROUP_MAX),
    filter((group) => group.length > 0),
    concatMap((group) => defer(() => embedGroup(ctx, group))),
    concatMap((group) => defer(() => linkGroup(ctx, group, cadence)).pipe(concatMap((outcomes) => from(outcomes)))),
  );
}

/** Wraps a stage function so that failures become a rejected outcome instead of ending the stream. */
function stage<A extends AnalysedArticle | Article, B>(name: string, ctx: PipelineContext, fn: (a: A) => B | Promise<B>, concurrency = 1): OperatorFunction<Flow<A>, Flow<B>> {
  const log = ctx.logger.child({ stage: name });
  const run = async (f: Flow<A>): Promise<Flow<B>> => {
    if (f.done) return f;
    const article: Article = 'article' in f.go ? (f.go as AnalysedArticle).article : (f.go as Article);
    try {
      return { go: await fn(f.go) };
    } catch (err) {
      log.warn({ article: article.id, err: describeError(err) }, 'article rejected');
      return { done: outcomeOf(article, 'rejected', `${name}: ${describeError(err)}`) };
    }
  };
  return concurrency > 1 ? orderedMergeMap(run, concurrency) : concatMap(run);
}

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
    const sameUrl = url ? inFlightUrls.get(url) ?? (await ctx.store.findByUrl(url)) : null;
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

/**
 * The embed stage, on a group of articles: each article's sentences are learned in turn
 * (TF-IDF document frequencies, in stream order) and the group's mentions are embedded
 * in one batch, which is what keeps a transformer model busy.
 */
async function embedGroup(ctx: PipelineContext, group: readonly Flow<DetectedWork>[]): Promise<Flow<EmbeddedArticle>[]> {
  const { embedder } = ctx;
  const prepared = group.map((f) => {
    if (f.done) return f;
    const a = f.go;
    // A TF-IDF vector uses the frequencies as they stand after its own article.
    ctx.embedder.learn?.(a.sentences.map((s) => ({ text: s.sentence.text, terms: s.terms })));
    // Taken here, not at commit: each article commits exactly its own increments, so a
    // crash never stores a later article's.
    const idf = embedder.takeLearned?.() ?? null;
    const vectors = a.vectors ?? (embedder.vectorNow ? a.mentions.map((m) => embedder.vectorNow!(m.terms)) : null);
    // The whole article, for its story, as the frequencies stand after it (like its sentences).
    const docVector = ctx.embedder.documentVector?.(a.sentences.flatMap((s) => s.terms)) ?? null;
    return { a, idf, vectors, docVector };
  });
  const pending = prepared.flatMap((p) => ('a' in p && !p.vectors ? p.a.mentions : []));
  let batch: Vector[] = [];
  try {
    batch = pending.length ? await ctx.embedder.embed(pending) : [];
  } catch (err) {
    const reason = `embed: ${describeError(err)}`;
    ctx.logger.child({ stage: 'embed' }).error({ articles: group.length, err: reason }, 'embedding failed');
    return prepared.map((p) => ('a' in p ? { done: outcomeOf(p.a.article, 'rejected', reason) } : p));
  }
  let at = 0;
  return prepared.map((p) => {
    if (!('a' in p)) return p;
    const vectors = p.vectors ?? batch.slice(at, (at += p.a.mentions.length));
    const { vectors: _carried, ...a } = p.a;
    return { go: { ...a, idf: p.idf, embedded: a.mentions.map((m, i) => ({ ...m, vector: vectors[i]! })), storyInput: storyInput(a, p.docVector ?? meanVector(vectors)) } };
  });
}

/** What the story linker reads of an article. */
function storyInput(a: DetectedArticle, vector: Vector | null): StoryArticle | null {
  if (!vector) return null;
  const names = a.sentences.flatMap((s) => [...s.participants, ...s.places]);
  return { id: a.article.id, title: a.article.title, outlet: a.article.outlet, published: a.article.published ?? a.article.fetched, vector, names, isCopy: a.article.duplicateOf !== null };
}

/** The normalised mean of dense vectors (a whole article for a model without document vectors), or null. */
function meanVector(vectors: readonly Vector[]): Vector | null {
  const dense = vectors.filter((v): v is DenseVector => v.kind === 'dense');
  if (dense.length === 0) return null;
  const sum = new Float32Array(dense[0]!.values.length);
  for (const v of dense) for (let i = 0; i < sum.length; i++) sum[i]! += v.values[i]!;
  let n = 0;
  for (const x of sum) n += x * x;
  n = Math.sqrt(n) || 1;
  for (let i = 0; i < sum.length; i++) sum[i]! /= n;
  return { kind: 'dense', values: sum };
}

/**
 * Counts stored articles over the whole store, so that a restarted process consolidates at
 * the same points, and says when consolidation is due (every `consolidateEvery`).
 */
class ConsolidationCadence {
  private stored: number | null = null;

  constructor(private readonly ctx: PipelineContext) {}

  /** Counts one more article about to be stored; true when consolidation is due after it. */
  async afterArticle(): Promise<boolean> {
    const every = this.ctx.config.link.consolidateEvery;
    this.stored = this.stored === null ? (await this.ctx.store.counts()).articles + 1 : this.stored + 1;
    return every > 0 && this.stored % every === 0;
  }

  /** Forgets the count (after a failed commit it is read from the store again). */
  reset(): void {
    this.stored = null;
  }
}

/**
 * Consolidation over the events among `ids`: merges those that turn out to be one, then
 * splits those whose mentions drifted apart. Each merge and split is its own commit; when
 * `signal` aborts, the pass stops after the one in hand.
 */
export async function consolidate(ctx: PipelineContext, ids: readonly string[], storyIds: readonly string[], signal?: AbortSignal): Promise<ConsolidationOutcome> {
  const merges = await mergeEvents(ctx, ids, signal);
  const gone = new Set(merges.map((m) => m.from));
  const splits = signal?.aborted ? [] : await splitEvents(ctx, ids.filter((id) => !gone.has(id)), signal);
  const storyMerges = signal?.aborted ? [] : await mergeStoriesOf(ctx, storyIds, signal);
  return { merges, splits, storyMerges };
}

/** Merges the stories among `ids` that turn out to be one thread; each merge is its own commit. */
async function mergeStoriesOf(ctx: PipelineContext, ids: readonly string[], signal?: AbortSignal): Promise<ArticleOutcome['storyMerges']> {
  const done: ArticleOutcome['storyMerges'] = [];
  for (const m of ctx.stories.planMerges(ids)) {
    if (signal?.aborted) break;
    const merged = ctx.stories.mergedState(m.into, m.from);
    await ctx.store.commitStoryMerge({
      into: { record: storyRecord(merged), state: serialiseStory(merged) }, from: m.from, score: m.score, at: ctx.now().toISOString(),
      messages: buildStoryMergeMessages(m, merged, ctx.config.webhooks.subscribers, ctx.now()),
    });
    ctx.stories.applyMerge(merged, m.from);
    done.push(m);
  }
  return done;
}

/** Splits the events among `ids` whose mentions drifted into two parts; events with erased mentions are left whole. */
async function splitEvents(ctx: PipelineContext, ids: readonly string[], signal?: AbortSignal): Promise<SplitOutcome[]> {
  const done: SplitOutcome[] = [];
  // Events examined and left whole: their marks are stored, so a restart examines the same.
  const unsplit: string[] = [];
  for (const id of ctx.linker.splitCandidates(ids)) {
    if (signal?.aborted) break;
    const linked = await ctx.store.linkedMentions(id);
    if (linked.some((l) => l.mention.vector === null)) {
      unsplit.push(id);
      continue;
    }
    const plan = ctx.linker.planSplit(id, linked.map((l) => ({ mention: l.mention as EmbeddedMention, rank: l.rank })));
    if (!plan) {
      unsplit.push(id);
      continue;
    }
    await applyStoredLabels(ctx, [plan.kept]);
    // The store relabels the event left behind when its label sentence moved (commitSplit);
    // the notification says the same: its earliest remaining sentence, as listed.
    const moved = new Set(plan.moved.map((m) => `${m.articleId}#${m.sentenceIndex}`));
    const movedTexts = linked.filter((l) => moved.has(`${l.mention.articleId}#${l.mention.sentenceIndex}`)).map((l) => l.mention.text).filter((t) => t !== '');
    if (drawnFrom(plan.kept.label, movedTexts)) {
      plan.kept.label = linked.find((l) => !moved.has(`${l.mention.articleId}#${l.mention.sentenceIndex}`) && l.mention.text !== '')?.mention.text ?? ERASED_LABEL;
    }
    await ctx.store.commitSplit({
      from: { record: toRecord(plan.kept), outlets: outletRows(plan.kept), state: serialiseEvent(plan.kept) },
      into: { record: toRecord(plan.split), outlets: outletRows(plan.split), state: serialiseEvent(plan.split) },
      moved: plan.moved, score: plan.score, at: ctx.now().toISOString(),
      messages: buildSplitMessages(plan, ctx.config.webhooks.subscribers, ctx.now()),
    });
    ctx.linker.applySplit(plan);
    done.push({ from: id, into: plan.split.id, score: plan.score, moved: plan.moved });
  }
  const marks = unsplit.map((id) => ctx.linker.event(id)).filter((e): e is EventState => e !== undefined);
  await ctx.store.putEventStates(marks.map((e) => ({ id: e.id, state: serialiseEvent(e) })));
  if (done.length) ctx.logger.child({ stage: 'link' }).debug({ splits: done.length }, 'consolidation split events');
  return done;
}

/** Merges the events among `ids` that turn out to be one; each merge is its own commit. */
async function mergeEvents(ctx: PipelineContext, ids: Iterable<string>, signal?: AbortSignal): Promise<ArticleOutcome['merges']> {
  const done: ArticleOutcome['merges'] = [];
  for (const m of ctx.linker.planMerges(ids, ctx.config.link.mergeThreshold)) {
    if (signal?.aborted) break;
    const merged = ctx.linker.mergedState(m.into, m.from, await ctx.store.linkedToBoth(m.into, m.from));
    await applyStoredLabels(ctx, [merged]);
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

/**
 * Gives events the labels the store holds, before they are notified: an erasure may have
 * relabelled an event since the linker read it, and a notification must not carry erased
 * text. The states are the linker's own, so its memory is brought up to date as well.
 */
async function applyStoredLabels(ctx: PipelineContext, events: readonly EventState[]): Promise<void> {
  // Without subscribers nothing is notified, and commits never write an existing label.
  if (events.length === 0 || ctx.config.webhooks.subscribers.length === 0) return;
  const labels = await ctx.store.eventLabels([...new Set(events.map((e) => e.id))]);
  for (const e of events) {
    const label = labels.get(e.id);
    if (label !== undefined) e.label = label;
  }
}

function outletRows(e: EventState): { outlet: string; mentions: number; independent: number }[] {
  return [...e.outlets].map(([outlet, [mentions, independent]]) => ({ outlet, mentions, independent }));
}

/**
 * Links a group of articles, one after another (each sees the links of those before it),
 * and commits them in one transaction: one commit per group instead of per article cut the
 * write cost several-fold (the same index pages are dirtied once). The linker applies each
 * plan at once; if the commit fails, the linker and the embedder are reloaded from the
 * store, so memory never holds what the store does not.
 */
async function linkGroup(ctx: PipelineContext, flows: readonly Flow<EmbeddedArticle>[], cadence: ConsolidationCadence): Promise<ArticleOutcome[]> {
  const log = ctx.logger.child({ stage: 'link' });
  const outcomes: ArticleOutcome[] = new Array(flows.length);
  let pending: { index: number; a: EmbeddedArticle; plan: LinkPlan; storyPlan: StoryPlan | null; commit: Omit<ArticleCommit, 'events' | 'messages' | 'story'> }[] = [];
  const flush = async (): Promise<void> => {
    if (pending.length === 0) return;
    const batch = pending;
    pending = [];
    // An event several articles of the group touched is written once, in its last state:
    // the group commits as one, so the states in between would be overwritten anyway.
    const lastWriter = new Map<string, number>();
    const lastStoryWriter = new Map<string, number>();
    batch.forEach((p, k) => {
      for (const e of p.plan.events) lastWriter.set(e.id, k);
      if (p.storyPlan) lastStoryWriter.set(p.storyPlan.story.id, k);
    });
    const subscribers = ctx.config.webhooks.subscribers;
    const openedHere = new Set(batch.flatMap((p) => p.plan.opened));
    await applyStoredLabels(ctx, batch.flatMap((p) => p.plan.events).filter((e) => !openedHere.has(e.id)));
    const commits: ArticleCommit[] = batch.map((p, k) => ({
      ...p.commit,
      events: p.plan.events.filter((e) => lastWriter.get(e.id) === k).map((e) => ({ record: toRecord(e), outlets: outletRows(e), state: serialiseEvent(e) })),
      story: p.storyPlan && lastStoryWriter.get(p.storyPlan.story.id) === k ? { record: storyRecord(p.storyPlan.story), state: serialiseStory(p.storyPlan.story) } : null,
      messages: [...buildMessages(p.plan, p.a.embedded, subscribers, ctx.now()), ...(p.storyPlan ? buildStoryMessages(p.storyPlan, p.a.article, subscribers, ctx.now()) : [])],
    }));
    let results: CommitResult[];
    try {
      results = await ctx.store.commitArticles(commits);
    } catch (err) {
      log.error({ articles: batch.length, err: describeError(err) }, 'commit failed; articles not stored');
      for (const p of batch) outcomes[p.index] = outcomeOf(p.a.article, 'rejected', describeError(err));
      await resync(ctx, cadence);
      return;
    }
    let stale = false;
    batch.forEach((p, k) => {
      if (results[k] === 'already-stored') {
        // Another writer stored it first: our in-memory plan for it must go.
        stale = true;
        outcomes[p.index] = outcomeOf(p.a.article, 'duplicate', 'already stored');
        return;
      }
      outcomes[p.index] = {
        ...outcomeOf(p.a.article, 'stored', null),
        sentences: p.a.sentences.length,
        mentions: p.a.mentions.length,
        links: p.plan.links.length,
        opened: p.plan.opened.length,
        story: p.storyPlan?.story.id ?? null,
        storyOpened: p.storyPlan?.opened ?? false,
        outletsAdded: p.plan.outletsAdded.length,
        assignments: assignments(p.plan.links),
      };
    });
    if (stale) await resync(ctx, cadence);
  };

  for (let i = 0; i < flows.length; i++) {
    const f = flows[i]!;
    if (f.done) {
      outcomes[i] = f.done;
      continue;
    }
    const a = f.go;
    // The story first: a sentence is judged against its article's story.
    const storyPlan = a.storyInput ? ctx.stories.plan(a.storyInput) : null;
    if (storyPlan) ctx.stories.apply(storyPlan);
    const plan = ctx.linker.plan(a.embedded, storyPlan?.story.id ?? null, (id) => ctx.stories.resolve(id));
    ctx.linker.apply(plan);
    pending.push({
      index: i, a, plan, storyPlan,
      commit: {
        storyId: storyPlan?.story.id ?? null,
        article: a.article,
        sentences: a.sentences.map((s, k) => ({ index: s.sentence.index, text: s.sentence.text, start: s.sentence.start, end: s.sentence.end, eventness: a.eventness[k]! })),
        mentions: a.embedded,
        links: plan.links,
        sketch: ctx.copies?.sketchOf(a.article.id) ?? null,
        idf: a.idf,
        tally: plan.tally,
      },
    });
    if (await cadence.afterArticle()) {
      // Consolidation reads what is stored: commit what is pending first.
      await flush();
      if (outcomes[i]?.status !== 'stored') continue;
      try {
        const every = ctx.config.link.consolidateEvery;
        outcomes[i] = { ...outcomes[i]!, ...await consolidate(ctx, await ctx.store.recentEventIds(every), await ctx.store.recentStoryIds(every)) };
      } catch (err) {
        // The articles are stored; a failed merge is retried at the next pass.
        log.error({ err: describeError(err) }, 'consolidation failed');
        await resync(ctx, cadence);
      }
    }
  }
  await flush();
  return outcomes;
}

/** Reloads the linker, the embedder's document frequencies and the copy index from the store. */
export async function reloadLinking(ctx: PipelineContext): Promise<void> {
  const snapshot = await ctx.store.loadLinkerState();
  ctx.linker.reset();
  ctx.linker.load(snapshot.events.map(deserialiseEvent), snapshot.tally);
  ctx.stories.reset();
  ctx.stories.load(snapshot.stories.map(deserialiseStory), snapshot.storyMerges);
  ctx.embedder.load?.(snapshot.idf);
  await ctx.copies?.load(ctx.store);
}

/** After a failed or stale commit: memory back to what the store holds. */
async function resync(ctx: PipelineContext, cadence: ConsolidationCadence): Promise<void> {
  await reloadLinking(ctx);
  cadence.reset();
}

function assignments(links: readonly { sentenceIndex: number; eventId: string; rank: number }[]): ArticleOutcome['assignments'] {
  const by = new Map<number, { rank: number; eventId: string }[]>();
  for (const l of links) by.set(l.sentenceIndex, [...(by.get(l.sentenceIndex) ?? []), l]);
  return [...by].map(([sentenceIndex, ls]) => ({ sentenceIndex, eventIds: ls.sort((x, y) => x.rank - y.rank).map((l) => l.eventId) }));
}

/** An outcome with nothing stored yet (a rejection, a duplicate; a stored article's counts are filled in). */
export function outcomeOf(a: Article, status: ArticleOutcome['status'], reason: string | null): ArticleOutcome {
  return { articleId: a.id, outlet: a.outlet, status, reason, duplicateOf: a.duplicateOf, sentences: 0, mentions: 0, links: 0, opened: 0, outletsAdded: 0, assignments: [], merges: [], splits: [], story: null, storyOpened: false, storyMerges: [] };
}
