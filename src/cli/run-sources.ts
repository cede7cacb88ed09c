/**
 * Runs feed documents through the pipeline and tallies the outcome; shared by `replay`,
 * `ingest` and `serve --replay`.
 */
import { NEVER, type Observable, concatMap, delay, from, fromEvent, lastValueFrom, of, take, takeUntil, tap, timer } from 'rxjs';
import { readReplayInput } from '../ingest/replay-source.js';
import type { IngestProblem } from '../ingest/read-source.js';
import { type ArticleOutcome, runPipeline } from '../pipeline/index.js';
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
  storiesOpened: number;
  /** Events consolidation found to be one with another and merged. */
  eventsMerged: number;
  problems: IngestProblem[];
  seconds: number;
  /** Articles read that the run never came to, because it was asked to stop (0 for a finished run). */
  notRun: number;
}

/** Callbacks while running. */
export interface RunHooks {
  /** Before the sources are read. */
  onStart?(): void;
  onRead?(total: number): void;
  onOutcome?(o: ArticleOutcome, done: number): void;
}

/** How long a stopped run may take to finish the articles already on their way, ms. */
const DRAIN_MS = 3_000;

/**
 * Reads the sources, runs every article through the pipeline and returns the totals. When
 * `signal` aborts, no further article enters the pipeline; those already on their way are
 * finished (each committed whole) for up to `drainMs`, then the run ends where it is.
 */
export async function runSources(
  rt: Runtime,
  sources: readonly string[],
  opts: { paceMs?: number; signal?: AbortSignal; drainMs?: number } = {},
  hooks: RunHooks = {},
): Promise<RunSummary> {
  const t0 = performance.now();
  hooks.onStart?.();
  const input = await readReplayInput(sources, rt.config.ingest, opts.signal);
  const summary: RunSummary = {
    files: input.files.length,
    articlesRead: input.articles.length,
    stored: 0,
    alreadyStored: 0,
    copies: 0,
    rejected: [],
    sentences: 0,
    mentions: 0,
    links: 0,
    eventsOpened: 0,
    storiesOpened: 0,
    eventsMerged: 0,
    problems: input.problems,
    seconds: 0,
    notRun: 0,
  };
  hooks.onRead?.(input.articles.length);
  const pace = opts.paceMs ?? 0;
  const stop$ = aborted(opts.signal);
  const paced = pace > 0 ? from(input.articles).pipe(concatMap((a) => of(a).pipe(delay(pace)))) : from(input.articles);
  const source = paced.pipe(takeUntil(stop$));
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
        if (o.storyOpened) summary.storiesOpened++;
        summary.eventsMerged += o.merges.length;
      } else if (o.status === 'duplicate') {
        summary.alreadyStored++;
      } else {
        summary.rejected.push({ article: o.articleId, reason: o.reason ?? 'unknown' });
      }
      hooks.onOutcome?.(o, done);
    }),
  );
  // Articles already on their way get drainMs to finish; after that the run ends where it is.
  const drained$ = stop$.pipe(concatMap(() => timer(opts.drainMs ?? DRAIN_MS)));
  await lastValueFrom(outcomes.pipe(takeUntil(drained$)), { defaultValue: null });
  summary.notRun = input.articles.length - done;
  summary.seconds = (performance.now() - t0) / 1000;
  return summary;
}

/** Emits once when the signal aborts (at once if it already has); never without a signal. */
function aborted(signal?: AbortSignal): Observable<unknown> {
  if (!signal) return NEVER;
  return signal.aborted ? of(true) : fromEvent(signal, 'abort').pipe(take(1));
}

/** A human-readable summary. */
export function formatSummary(s: RunSummary): string {
  const lines = [
    `read      ${s.files} feed file(s), ${s.articlesRead} article(s)`,
    `stored    ${s.stored} article(s)${s.copies ? `, of which ${s.copies} copies of earlier articles (verbatim or lightly edited)` : ''}; ${s.alreadyStored} already stored before`,
    `text      ${s.sentences} sentence(s), ${s.mentions} event sentence(s), ${s.links} link(s), ${s.eventsOpened} new event(s), ${s.eventsMerged} merged into others, in ${s.storiesOpened} new story(ies)`,
    `time      ${s.seconds.toFixed(1)} s${s.sentences ? ` (${Math.round(s.sentences / s.seconds)} sentences/s)` : ''}`,
  ];
  if (s.notRun > 0)
    lines.push(`stopped   early: ${s.notRun} of ${s.articlesRead} article(s) not run; the same command again continues where it stopped`);
  const problems = [
    ...s.problems.map(
      (p) => `${p.severity === 'error' ? 'error  ' : 'warning'} ${p.source}${p.item ? ` [${p.item}]` : ''}: ${p.code}: ${p.message}`,
    ),
    ...s.rejected.map((r) => `error   [${r.article}]: ${r.reason}`),
  ];
  if (problems.length) lines.push(`problems  ${problems.length}:`, ...problems.map((p) => `  ${p}`));
  return lines.join('\n');
}
