/**
 * The rxjs wiring of the stages. Each stage is one operator with a typed record in and
 * out; an article that leaves early (already stored, rejected) travels on as a finished
 * outcome so that the caller sees exactly one outcome per article, in order.
 *
 *   articles ─► admit ─► analyse ─► detect ─► (group) ─► embed ─► link + commit ─► outcomes
 *
 * Every stage takes one item at a time (concatMap): one article up to detection, then a
 * group of articles (up to GROUP_MAX, or what arrived within GROUP_MS, ending where a
 * consolidation pass is due) for embedding, linking and committing. Linking is serial by
 * nature. The one exception is analysis on worker threads, which runs a few articles
 * ahead and hands them on in input order.
 */
import { type Observable, type OperatorFunction, concatMap, defer, tap } from 'rxjs';
import { groupWhileBusy } from './group-while-busy.js';
import { detectMentions } from '../detect/detect-mentions.js';
import { describeError } from '../errors.js';
import type { Article } from '../records.js';
import { orderedMergeMap } from '../ordered-merge-map.js';
import { type AnalysedArticle, analyseArticle } from '../text/analyse-article.js';
import { ANALYSIS_AHEAD } from '../text/analysis-pool.js';
import { type ArticleOutcome, type DetectedWork, type Flow, type PipelineContext, outcomeOf } from './context.js';
import { admitStage } from './admit.js';
import { embedGroup } from './embed-group.js';
import { ConsolidationCadence } from '../link/consolidate.js';
import { linkGroup } from './link-group.js';

/** Largest group of articles committed in one transaction. */
const GROUP_MAX = 32;

/** Longest an article waits for others to join its group while the link stage is free, ms (live feeds trickle). */
const GROUP_MS = 10;

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
      concatMap((a) =>
        defer(async () => {
          await window.enter();
          return admit(a);
        }),
      ),
      ...analyseAndDetect(ctx),
      linkStages(ctx),
      tap(() => window.leave()),
    );
  });
}

/** The analysis and detection stages (analysis on threads when the context has them). */
function analyseAndDetect(
  ctx: PipelineContext,
): [OperatorFunction<Flow<Article>, Flow<AnalysedArticle>>, OperatorFunction<Flow<AnalysedArticle>, Flow<DetectedWork>>] {
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
  // One embedding batch and one commit per group: up to GROUP_MAX articles, ending where a
  // consolidation pass is due (the pass commits what is pending: a group running past it
  // would commit twice).
  return groupWhileBusy(
    () => Math.min(GROUP_MAX, cadence.untilDue()),
    GROUP_MS,
    (group) => defer(async () => linkGroup(ctx, await embedGroup(ctx, group), cadence)).pipe(concatMap((outcomes) => outcomes)),
  );
}

/** Wraps a stage function so that failures become a rejected outcome instead of ending the stream. */
function stage<A extends AnalysedArticle | Article, B>(
  name: string,
  ctx: PipelineContext,
  fn: (a: A) => B | Promise<B>,
  concurrency = 1,
): OperatorFunction<Flow<A>, Flow<B>> {
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
