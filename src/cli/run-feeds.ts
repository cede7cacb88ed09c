/**
 * Runs feed documents through the pipeline and tallies the outcome; shared by `replay`,
 * `ingest` and `serve --replay`.
 */
import { concatMap, delay, from, lastValueFrom, of, tap, type Subscription, Observable } from 'rxjs';
import { readReplayInput } from '../ingest/replay-source.js';
import type { IngestProblem } from '../ingest/read-source.js';
import { type ArticleOutcome, runPipeline } from '../pipeline.js';
import type { Runtime } from '../runtime.js';

/** Totals of one run. */
export interface RunSummary {
  files: number;
  articlesRead: number;
  stored: number;
  alreadyStored: number;
  copies: number;
  rejected: { article: string; reason: string }[];
  sentences: number;
  mentions: number;
  links: number;
  eventsOpened: number;
  /** Events consolidation found to be one with another and merged. */
  eventsMerged: number;
  problems: IngestProblem[];
  seconds: number;
}

/** Callbacks while running. */
export interface RunHooks {
  onRead?(total: number): void;
  onOutcome?(o: ArticleOutcome, done: number): void;
}

/** Reads the sources, runs every article through the pipeline and returns the totals. */
export async function runFeeds(rt: Runtime, sources: readonly string[], opts: { paceMs?: number; signal?: AbortSignal } = {}, hooks: RunHooks = {}): Promise<RunSummary> {
  const t0 = performance.now();
  const input = await readReplayInput(sources, rt.config.ingest);
  const summary: RunSummary = {
    files: input.files.length, articlesRead: input.articles.length, stored: 0, alreadyStored: 0, copies: 0, rejected: [],
    sentences: 0, mentions: 0, links: 0, eventsOpened: 0, eventsMerged: 0, problems: input.problems, seconds: 0,
  };
  hooks.onRead?.(input.articles.length);
  const pace = opts.paceMs ?? 0;
  const source = pace > 0 ? from(input.articles).pipe(concatMap((a) => of(a).pipe(delay(pace)))) : from(input.articles);
  let done = 0;
  const outcomes = runPipeline(source, rt).pipe(
    tap((o) => {
      done++;
      if (o.status === 'stored') {
        summary.stored++;
        if (o.duplicateOf) summary.copies++;
        summary.sentences += o.sentences;
        summary.mentions += o.mentions;
        summary.links += o.links;
        summary.eventsOpened += o.opened;
        summary.eventsMerged += o.merges.length;
      } else if (o.status === 'duplicate') {
        summary.alreadyStored++;
      } else {
        summary.rejected.push({ article: o.articleId, reason: o.reason ?? 'unknown' });
      }
      hooks.onOutcome?.(o, done);
    }),
  );
  await lastValueFrom(abortable(outcomes, opts.signal), { defaultValue: null });
  summary.seconds = (performance.now() - t0) / 1000;
  return summary;
}

/** Completes the stream early (after the article in progress) when the signal fires. */
function abortable<T>(src: Observable<T>, signal?: AbortSignal): Observable<T> {
  if (!signal) return src;
  return new Observable<T>((sub) => {
    let inner: Subscription | null = null;
    const stop = (): void => {
      inner?.unsubscribe();
      sub.complete();
    };
    if (signal.aborted) return stop();
    signal.addEventListener('abort', stop, { once: true });
    inner = src.subscribe(sub);
    return () => {
      signal.removeEventListener('abort', stop);
      inner?.unsubscribe();
    };
  });
}

/** A human-readable summary. */
export function formatSummary(s: RunSummary): string {
  const lines = [
    `read      ${s.files} feed file(s), ${s.articlesRead} article(s)`,
    `stored    ${s.stored} article(s)${s.copies ? `, of which ${s.copies} copies of earlier articles (verbatim or lightly edited)` : ''}; ${s.alreadyStored} already stored before`,
    `text      ${s.sentences} sentence(s), ${s.mentions} event sentence(s), ${s.links} link(s), ${s.eventsOpened} new event(s), ${s.eventsMerged} merged into others`,
    `time      ${s.seconds.toFixed(1)} s${s.sentences ? ` (${Math.round(s.sentences / s.seconds)} sentences/s)` : ''}`,
  ];
  const problems = [
    ...s.problems.map((p) => `${p.severity === 'error' ? 'error  ' : 'warning'} ${p.source}${p.item ? ` [${p.item}]` : ''}: ${p.code}: ${p.message}`),
    ...s.rejected.map((r) => `error   [${r.article}]: ${r.reason}`),
  ];
  if (problems.length) lines.push(`problems  ${problems.length}:`, ...problems.map((p) => `  ${p}`));
  return lines.join('\n');
}
