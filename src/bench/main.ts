/**
 * `npm run bench`: throughput and memory of the whole pipeline, printed as a table and
 * written as JSON to bench-results/. Speed is measured here, never in tests.
 *
 * Workloads:
 *   demo replay     the demo feeds read from disk, parsed, split, scored, embedded, linked
 *                   and committed to a SQLite file, as `strandline replay` does;
 *   demo x10        the demo's articles ten times over with new ids and dates shifted by
 *                   20 days per copy (a synthetic stream ten times longer; the shift keeps
 *                   copies from merging into the originals' events).
 */
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { from, lastValueFrom, toArray } from 'rxjs';
import { parseConfig } from '../config/load-config.js';
import { readReplayInput } from '../ingest/replay-source.js';
import { createLogger } from '../logger.js';
import { runPipeline } from '../pipeline.js';
import type { Article } from '../records.js';
import { createRuntime } from '../runtime.js';
import { openSqliteStore } from '../store/sqlite/sqlite-store.js';
import { DEMO_FEEDS, version } from '../cli/common.js';

interface Row {
  workload: string;
  articles: number;
  sentences: number;
  mentions: number;
  seconds: number;
  sentencesPerSecond: number;
}

const REPEATS = 5;
const DAY_MS = 86_400_000;

async function run(workload: string, articles: () => Promise<Article[]>): Promise<Row> {
  const times: number[] = [];
  let sentences = 0;
  let mentions = 0;
  let count = 0;
  for (let i = 0; i < REPEATS; i++) {
    const dir = mkdtempSync(join(tmpdir(), 'strandline-bench-'));
    const config = parseConfig({ store: { path: join(dir, 'bench.sqlite') }, log: { level: 'silent' } });
    const rt = await createRuntime(config, createLogger('silent'), openSqliteStore(config.store.path));
    const t0 = performance.now();
    const input = await articles();
    const outcomes = await lastValueFrom(runPipeline(from(input), rt).pipe(toArray()));
    times.push((performance.now() - t0) / 1000);
    sentences = outcomes.reduce((n, o) => n + o.sentences, 0);
    mentions = outcomes.reduce((n, o) => n + o.mentions, 0);
    count = outcomes.length;
    await rt.close();
    rmSync(dir, { recursive: true, force: true });
  }
  const seconds = times.sort((a, b) => a - b)[Math.floor(times.length / 2)]!;
  return { workload, articles: count, sentences, mentions, seconds, sentencesPerSecond: sentences / seconds };
}

async function demoArticles(): Promise<Article[]> {
  const config = parseConfig({});
  return (await readReplayInput([DEMO_FEEDS], config.ingest)).articles;
}

async function demoTimesTen(): Promise<Article[]> {
  const base = await demoArticles();
  const out: Article[] = [];
  for (let k = 0; k < 10; k++) {
    for (const a of base) {
      const shift = (t: string | null) => (t ? new Date(Date.parse(t) + k * 20 * DAY_MS).toISOString() : t);
      out.push({ ...a, id: `${a.id}#copy${k}`, published: shift(a.published), contentHash: `${a.contentHash}:${k}`, duplicateOf: null });
    }
  }
  return out;
}

async function main(): Promise<void> {
  const rows = [await run('demo replay (read + pipeline + SQLite file)', demoArticles), await run('demo x10 (synthetic, 1,010 articles)', demoTimesTen)];
  const peakRssMiB = process.resourceUsage().maxRSS / 1024;
  const header = ['workload', 'articles', 'sentences', 'mentions', 'median s', 'sentences/s'];
  const table = rows.map((r) => [r.workload, String(r.articles), String(r.sentences), String(r.mentions), r.seconds.toFixed(3), r.sentencesPerSecond.toFixed(0)]);
  const widths = header.map((h, i) => Math.max(h.length, ...table.map((t) => t[i]!.length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ');
  process.stdout.write(`Strandline ${version()} pipeline benchmark (median of ${REPEATS} runs; Node ${process.version}, default configuration)\n\n`);
  process.stdout.write(`${line(header)}\n${widths.map((w) => '-'.repeat(w)).join('  ')}\n${table.map(line).join('\n')}\n\npeak resident memory: ${peakRssMiB.toFixed(0)} MiB\n`);
  mkdirSync('bench-results', { recursive: true });
  const file = join('bench-results', `bench-${new Date().toISOString().replace(/[:.]/g, '-')}.json`);
  writeFileSync(file, `${JSON.stringify({ version: version(), node: process.version, date: new Date().toISOString(), repeats: REPEATS, rows, peakRssMiB }, null, 2)}\n`);
  process.stdout.write(`written: ${file}\n`);
}

await main();
