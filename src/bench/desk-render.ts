/**
 * How fast the desk page is in a browser over a large store: a store of at least 5,000
 * events and 500 stories (copies of the demo, shifted in time, run through the pipeline),
 * the app serving it, and Debian's Chromium (headless) opening the desk. Measured in the
 * page itself with the User Timing marks the page sets:
 *   first render  navigation start to the desk's list painted ("desk-rendered"), fresh page each time;
 *   live update   a stream message's arrival to the update it causes painted ("live-update"),
 *                 while articles are run through the pipeline one by one.
 */
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { from, lastValueFrom, toArray } from 'rxjs';
import { buildApp } from '../api/build-app.js';
import { DEMO_FEEDS } from '../cli/common.js';
import { parseConfig } from '../config/load-config.js';
import { readReplayInput } from '../ingest/replay-source.js';
import { createLogger } from '../logger.js';
import { runPipeline } from '../pipeline/index.js';
import type { Article } from '../records.js';
import { createRuntime, type Runtime } from '../runtime.js';
import { openSqliteStore } from '../store/sqlite/sqlite-store.js';
import { copies } from './demo-copies.js';

export interface DeskRenderRow {
  events: number;
  stories: number;
  renders: number;
  firstRenderMedianMs: number;
  firstRenderMaxMs: number;
  liveUpdates: number;
  liveUpdateP50Ms: number;
  liveUpdateP95Ms: number;
  liveUpdateMaxMs: number;
}

const CHROMIUM = '/usr/bin/chromium';
const quantile = (xs: number[], q: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.floor(q * s.length))] ?? NaN;
};
const run = (rt: Runtime, articles: Article[]) => lastValueFrom(runPipeline(from(articles), rt).pipe(toArray()));

/** Fills a store to the given size, serves it, and measures the desk; null without Chromium. */
export async function deskRender(minEvents = 5000, minStories = 500, renders = 7, updates = 30): Promise<DeskRenderRow | null> {
  if (!existsSync(CHROMIUM)) return null;
  const { chromium } = await import('playwright-core');
  const dir = mkdtempSync(join(tmpdir(), 'strandline-desk-'));
  const config = parseConfig({ store: { path: join(dir, 'store.sqlite') }, log: { level: 'silent' } });
  const logger = createLogger('silent');
  const rt = await createRuntime(config, logger, openSqliteStore(config.store.path));
  const demo = (await readReplayInput([DEMO_FEEDS], config.ingest)).articles;
  let copy = 0;
  for (;;) {
    const c = await rt.store.counts();
    if (c.events >= minEvents && c.stories >= minStories) break;
    await run(rt, copies(demo, 4, copy));
    copy += 4;
  }
  const counts = await rt.store.counts();
  const app = await buildApp({
    store: rt.store,
    logger,
    version: 'bench',
    ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
  });
  const base = await app.listen({ host: '127.0.0.1', port: 0 });
  const browser = await chromium.launch({
    executablePath: CHROMIUM,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking'],
  });
  try {
    const firstRenders: number[] = [];
    for (let i = 0; i < renders; i++) {
      const page = await browser.newPage();
      await page.goto(`${base}/`);
      // Functions, not strings: the page's policy forbids evaluating text.
      await page.waitForFunction(() => performance.getEntriesByName('desk-rendered').length > 0);
      firstRenders.push(await page.evaluate(() => performance.getEntriesByName('desk-rendered')[0]!.startTime));
      await page.close();
    }
    const page = await browser.newPage();
    await page.goto(`${base}/`);
    await page.locator('#live[data-state=live]').waitFor();
    // New articles, one at a time, a little apart: each causes stream messages the desk paints.
    for (const a of copies(demo, 1, copy).slice(0, updates)) {
      await run(rt, [a]);
      await new Promise((r) => setTimeout(r, 250));
    }
    await new Promise((r) => setTimeout(r, 1000));
    const live = await page.evaluate(() => performance.getEntriesByName('live-update').map((e) => e.duration));
    return {
      events: counts.events,
      stories: counts.stories,
      renders,
      firstRenderMedianMs: quantile(firstRenders, 0.5),
      firstRenderMaxMs: Math.max(...firstRenders),
      liveUpdates: live.length,
      liveUpdateP50Ms: quantile(live, 0.5),
      liveUpdateP95Ms: quantile(live, 0.95),
      liveUpdateMaxMs: Math.max(...live),
    };
  } finally {
    await browser.close();
    await app.close();
    await rt.close();
    rmSync(dir, { recursive: true, force: true });
  }
}
