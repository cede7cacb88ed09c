/** `strandline replay <path...>` and `strandline ingest <url|file...>`: run feeds through the pipeline once. */
import { SingleBar, Presets } from 'cli-progress';
import { createRuntime } from '../../runtime.js';
import { type CommonOptions, setup } from '../common.js';
import { formatSummary, runSources } from '../run-sources.js';
import { listenForStop } from '../stop-signals.js';

/** Options of replay and ingest. */
export interface ReplayOptions extends CommonOptions {
  pace?: number;
  progress?: boolean;
  json?: boolean;
}

/**
 * Runs the sources and prints a summary; returns the process exit code: 0, 1 when a source
 * could not be read (the others still ran), 130 or 143 when SIGINT or SIGTERM stopped it
 * (the summary says how far it got).
 */
export async function replayCommand(sources: string[], opts: ReplayOptions): Promise<number> {
  const { config, logger } = setup(opts);
  const rt = await createRuntime(config, logger);
  const showBar = opts.progress !== false && !opts.json && process.stderr.isTTY === true;
  const bar = new SingleBar(
    { format: 'replay [{bar}] {value}/{total} articles | {eta_formatted} left', hideCursor: true, stream: process.stderr },
    Presets.shades_classic,
  );
  const stop = listenForStop('the run');
  // Without a progress bar, a line on stderr says the run is under way (scripts and logs see it start).
  const say = (line: string): void => void (!showBar && process.stderr.write(`${line}\n`));
  try {
    const summary = await runSources(
      rt,
      sources,
      { paceMs: opts.pace ?? 0, signal: stop.signal },
      {
        onStart: () => say(`reading ${sources.length} source(s)…`),
        onRead: (total) => (showBar ? bar.start(total, 0) : say(`running ${total} article(s)…`)),
        onOutcome: (_o, done) => showBar && bar.update(done),
      },
    );
    if (showBar) bar.stop();
    process.stdout.write(`${opts.json ? JSON.stringify(summary, null, 2) : formatSummary(summary)}\n`);
    // A source that could not be read as a whole fails the command (after the others ran).
    const failed = summary.problems.some((p) => p.item === null && p.severity === 'error');
    return stop.exitCode(failed ? 1 : 0);
  } finally {
    stop.dispose();
    await rt.close();
  }
}
