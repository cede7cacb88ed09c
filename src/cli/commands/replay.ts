/** `strandline replay <path...>` and `strandline ingest <url|file...>`: run feeds through the pipeline once. */
import { SingleBar, Presets } from 'cli-progress';
import { createRuntime } from '../../runtime.js';
import { type CommonOptions, setup } from '../common.js';
import { formatSummary, runFeeds } from '../run-feeds.js';

/** Options of replay and ingest. */
export interface ReplayOptions extends CommonOptions {
  pace?: number;
  progress?: boolean;
  json?: boolean;
}

/** Runs the sources and prints a summary; returns the process exit code. */
export async function replayCommand(sources: string[], opts: ReplayOptions): Promise<number> {
  const { config, logger } = setup(opts);
  const rt = await createRuntime(config, logger);
  const showBar = opts.progress !== false && !opts.json && process.stderr.isTTY === true;
  const bar = new SingleBar({ format: 'replay [{bar}] {value}/{total} articles | {eta_formatted} left', hideCursor: true, stream: process.stderr }, Presets.shades_classic);
  const abort = new AbortController();
  const onSignal = (): void => abort.abort();
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  try {
    const summary = await runFeeds(rt, sources, { paceMs: opts.pace ?? 0, signal: abort.signal }, {
      onRead: (total) => showBar && bar.start(total, 0),
      onOutcome: (_o, done) => showBar && bar.update(done),
    });
    if (showBar) bar.stop();
    process.stdout.write(`${opts.json ? JSON.stringify(summary, null, 2) : formatSummary(summary)}\n`);
    if (abort.signal.aborted) process.stderr.write('stopped early; run the same command again to continue where it stopped\n');
    // Nothing readable at all is a failure; anything less is reported and the run goes on.
    return summary.files === 0 && summary.problems.length > 0 ? 1 : 0;
  } finally {
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    await rt.close();
  }
}
