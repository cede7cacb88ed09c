/**
 * The single-process way in for articles that do not come from a replay: pushed batches run
 * through the pipeline one after another, and after any replay in progress, because the
 * linker links one article at a time. (With the Redis store, the api process queues them
 * for the workers instead.)
 */
import { from, lastValueFrom, tap } from 'rxjs';
import { describeError } from './errors.js';
import type { Logger } from './logger.js';
import { type ArticleOutcome, type PipelineContext, runPipeline } from './pipeline/index.js';
import type { Article } from './records.js';

export class LocalIntake {
  private tail: Promise<unknown> = Promise.resolve();
  private readonly log: Logger;

  constructor(
    private readonly ctx: PipelineContext,
    private readonly onOutcome: (o: ArticleOutcome) => void = () => undefined,
  ) {
    this.log = ctx.logger.child({ stage: 'intake' });
  }

  /** Runs `fn` after everything handed in before it (a replay holds the pipeline this way). */
  exclusive<T>(fn: () => Promise<T>): Promise<T> {
    const run = this.tail.then(fn, fn);
    this.tail = run.catch(() => undefined);
    return run;
  }

  /** Queues a batch; resolves at once (the batch runs when its turn comes). */
  submit(articles: readonly Article[]): Promise<void> {
    void this.exclusive(() =>
      lastValueFrom(runPipeline(from(articles), this.ctx).pipe(tap((o) => this.onOutcome(o))), { defaultValue: null }),
    ).catch((err: unknown) => this.log.error({ err: describeError(err), articles: articles.length }, 'pushed batch failed'));
    return Promise.resolve();
  }

  /** Resolves once everything handed in so far has run. */
  async idle(): Promise<void> {
    await this.tail;
  }
}
