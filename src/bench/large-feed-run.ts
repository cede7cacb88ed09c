/**
 * Runs one large feed (10,000 items, about 20 MB) into an existing store, as
 * `strandline replay` does, and prints JSON: items stored, refused, seconds and the
 * process's peak resident memory. A process of its own, so the peak is this run's alone.
 */
import { mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DEMO_FEEDS } from '../cli/common.js';
import { runSources } from '../cli/run-sources.js';
import { parseConfig } from '../config/load-config.js';
import { createLogger } from '../logger.js';
import { createRuntime } from '../runtime.js';
import { largeFeed } from './large-feed.js';

/** What the large-feed run measured. */
export interface LargeFeedRow {
  items: number;
  feedBytes: number;
  stored: number;
  refused: number;
  seconds: number;
  peakRssMiB: number;
}

const ITEMS = 10_000;
const dir = mkdtempSync(join(tmpdir(), 'strandline-large-feed-'));
try {
  const feed = join(dir, 'archive.rss.xml');
  writeFileSync(feed, largeFeed(ITEMS));
  const config = parseConfig({ store: { path: join(dir, 'store.sqlite') }, log: { level: 'error' } });
  const rt = await createRuntime(config, createLogger('error'));
  // An existing store: the demo first.
  await runSources(rt, [DEMO_FEEDS]);
  const summary = await runSources(rt, [feed]);
  await rt.close();
  const row: LargeFeedRow = {
    items: summary.articlesRead,
    feedBytes: statSync(feed).size,
    stored: summary.stored,
    refused: summary.rejected.length + summary.problems.filter((p) => p.severity === 'error').length,
    seconds: summary.seconds,
    peakRssMiB: process.resourceUsage().maxRSS / 1024,
  };
  process.stdout.write(JSON.stringify(row));
} finally {
  rmSync(dir, { recursive: true, force: true });
}
