/**
 * `npm run bench`: throughput and memory of the whole pipeline, printed as a table and
 * written as JSON to bench-results/. Speed is measured here, never in tests.
 *
 * Workloads:
 *   demo replay     the demo feeds read from disk, parsed, split, scored, embedded, linked
 *                   and committed to a SQLite file, as `strandline replay` does;
 *   demo x10        the demo's articles ten times over with new ids and dates shifted by
 *                   20 days per copy (a synthetic stream ten times longer; the shift keeps
 *                   copies from merging into the originals' events);
 *   link scale      the link step's median and 99th-percentile time per mention after
 *                   10k, 100k and 1M stored mentions, with memory (src/bench/link-scale.ts);
 *   transformer     the pipeline with a MiniLM-sized transformer against the model alone
 *                   (src/bench/transformer-throughput.ts);
 *   poll rounds     200 feeds on a local server polled twice; the second round should be
 *                   answered almost entirely by 304 Not Modified (src/bench/poll-rounds.ts);
 *   large feed      one 10,000-item feed (about 19 MB) into an existing store, in a process
 *                   of its own: every item stored, seconds, peak resident memory
 *                   (src/bench/large-feed-run.ts);
 *   desk page       the desk in headless Chromium over 5,000+ events and 500+ stories: first
 *                   render and stream message to painted update, timed in the page
 *                   (src/bench/desk-render.ts);
 *   linker vs batch the online linker's link step against the batch all-pairs baseline
 *                   (average-link agglomerative clustering) on the same 20,000 mentions of
 *                   the synthetic stream (src/bench/synthetic-stream.ts), same vectors.
 */
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { availableParallelism, tmpdir } from 'node:os';
import { join } from 'node:path';
import { from, lastValueFrom, toArray } from 'rxjs';
import { parseConfig } from '../config/load-config.js';
import { readReplayInput } from '../ingest/replay-source.js';
import { createLogger } from '../logger.js';
import { runPipeline } from '../pipeline/index.js';
import type { Article } from '../records.js';
import { createRuntime } from '../runtime.js';
import { openSqliteStore } from '../store/sqlite/sqlite-store.js';
import { DEMO_FEEDS, version } from '../cli/common.js';
import type { EvalSpeedRow } from './eval-speed-run.js';
import { batchAverageLink } from '../eval/baselines.js';
import { checkEvalInput } from '../eval/eval-input.js';
import { scorePartitions } from '../eval/partition-metrics.js';
import { baselineMentions, detectArticles, selector, toArticles } from '../eval/prepare-mentions.js';
import { linkDetected } from '../eval/link-detected.js';
import { createEmbedder } from '../embed/create-embedder.js';
import { type AnalysisPool, analysisThreads, startAnalysisPool } from '../text/analysis-pool.js';
import { createNlp } from '../text/nlp.js';
import { syntheticStream } from './synthetic-stream.js';
import { copies } from './demo-copies.js';
import type { ScaleRow } from './link-scale.js';
import type { TransformerRow } from './transformer-throughput.js';
import type { LargeFeedRow } from './large-feed-run.js';
import type { NotifyLatencyRow } from './notify-latency.js';
import type { DeskRenderRow } from './desk-render.js';
import { pollRounds } from './poll-rounds.js';
import { redisAnswers, redisMemory, workerScaling } from './worker-scaling.js';

interface Row {
  workload: string;
  articles: number;
  sentences: number;
  mentions: number;
  seconds: number;
  sentencesPerSecond: number;
}

const REPEATS = 5;

/**
 * Runs a workload REPEATS times, each on a fresh store. The analysis threads are started
 * once and kept warm across runs, as in a running service (each run's main thread is warm too).
 */
async function run(workload: string, articles: () => Promise<Article[]>, analysis: AnalysisPool | undefined): Promise<Row> {
  const times: number[] = [];
  let sentences = 0;
  let mentions = 0;
  let count = 0;
  for (let i = 0; i < REPEATS; i++) {
    const dir = mkdtempSync(join(tmpdir(), 'strandline-bench-'));
    const config = parseConfig({
      store: { path: join(dir, 'bench.sqlite') },
      log: { level: 'silent' },
      analysis: { threads: analysis?.threads ?? 0 },
    });
    const rt = await createRuntime(config, createLogger('silent'), openSqliteStore(config.store.path), analysis);
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
  return copies(await demoArticles(), 10);
}

interface VersusRow {
  mentions: number;
  linkerSeconds: number;
  batchSeconds: number;
  speedup: number;
  linkerConllF1: number;
  batchConllF1: number;
}

/**
 * The link stage (as it runs live, on an in-memory store) and the batch all-pairs baseline
 * on the same synthetic mentions, analysed once; the baseline on plain TF-IDF vectors.
 */
async function linkerVersusBatch(mentions: number): Promise<VersusRow> {
  const config = parseConfig({ log: { level: 'silent' } });
  const stream = syntheticStream(mentions, 42);
  const input = checkEvalInput(stream);
  const nlp = createNlp();
  const articles = toArticles(input, 'synthetic', '2030-01-01T00:00:00.000Z');
  const detected = await detectArticles(nlp, articles, selector(input, 'gold'), config, await createEmbedder(config.embed));
  const run = await linkDetected(config, detected, {
    nlp,
    logger: createLogger('silent'),
    now: () => new Date('2030-01-01T00:00:00.000Z'),
  });
  const linked = new Map<string, string[]>();
  const redirect = new Map<string, string>();
  for (const o of run.outcomes) {
    for (const a of o.assignments) linked.set(`${o.articleId}#${a.sentenceIndex}`, a.eventIds);
    for (const m of o.merges) redirect.set(m.from, m.into);
  }
  const follow = (id: string): string => (redirect.has(id) ? follow(redirect.get(id)!) : id);
  const flat = baselineMentions(detected, config.embed.hashBits).flat();
  const t0 = performance.now();
  const batch = batchAverageLink(flat, config.link.threshold, config.link.halfLifeDays);
  const batchSeconds = (performance.now() - t0) / 1000;
  const key = partitionOf(new Map(stream.gold.map((g) => [`${g.article}#${g.sentence}`, [g.event]])));
  return {
    mentions: flat.length,
    linkerSeconds: run.seconds,
    batchSeconds,
    speedup: batchSeconds / run.seconds,
    linkerConllF1: scorePartitions(key, partitionOf(new Map([...linked].map(([k, v]) => [k, v.map(follow)])))).conllF1,
    batchConllF1: scorePartitions(key, partitionOf(batch)).conllF1,
  };
}

function partitionOf(c: Map<string, string[]>): string[][] {
  const by = new Map<string, string[]>();
  for (const [k, v] of c) by.set(v[0]!, [...(by.get(v[0]!) ?? []), k]);
  return [...by.values()];
}

async function main(): Promise<void> {
  const threads = analysisThreads(parseConfig({}).analysis.threads);
  const analysis = threads > 0 ? await startAnalysisPool(threads) : undefined;
  const rows = [
    await run('demo replay (read + pipeline + SQLite file)', demoArticles, analysis),
    await run('demo x10 (synthetic, 1,010 articles)', demoTimesTen, analysis),
    ...(analysis ? [await run('demo x10, all on the main thread', demoTimesTen, undefined)] : []),
  ];
  await analysis?.close();
  // --quick: the pipeline and polling rows only (seconds instead of about ten minutes).
  const quick = process.argv.includes('--quick');
  const polling = await pollRounds();
  // In a process of its own, like the link-scale rows: the heaps of the workloads measured
  // here (and the all-pairs baseline's matrices) slowed whatever was measured after them.
  const transformer: TransformerRow | null = quick
    ? null
    : (JSON.parse(
        execFileSync(process.execPath, [fileURLToPath(new URL('./transformer-run.js', import.meta.url))], {
          encoding: 'utf8',
          maxBuffer: 1 << 20,
        }),
      ) as TransformerRow);
  // Article-level gold (the shape of a corpus of articles pooled by incident), then
  // sentence-level gold (about three mentions per article).
  const evalSpeed: EvalSpeedRow[] = quick
    ? []
    : (['article', 'sentence'] as const).map(
        (level) =>
          JSON.parse(
            execFileSync(
              process.execPath,
              ['--max-old-space-size=8192', fileURLToPath(new URL('./eval-speed-run.js', import.meta.url)), '6000', level],
              { encoding: 'utf8', maxBuffer: 1 << 20 },
            ),
          ) as EvalSpeedRow,
      );
  const largeFeed: LargeFeedRow | null = quick
    ? null
    : (JSON.parse(
        execFileSync(process.execPath, [fileURLToPath(new URL('./large-feed-run.js', import.meta.url))], {
          encoding: 'utf8',
          maxBuffer: 1 << 20,
        }),
      ) as LargeFeedRow);
  // Push to webhook and to stream event, at a steady 20 articles/s (a process of its own).
  const notify: NotifyLatencyRow | null = quick
    ? null
    : (JSON.parse(
        execFileSync(process.execPath, [fileURLToPath(new URL('./notify-latency-run.js', import.meta.url))], {
          encoding: 'utf8',
          maxBuffer: 1 << 20,
        }),
      ) as NotifyLatencyRow);
  // The desk page in a browser over 5,000 events and 500 stories or more (a process of its own; null without Chromium).
  const desk: DeskRenderRow | null = quick
    ? null
    : (JSON.parse(
        execFileSync(process.execPath, [fileURLToPath(new URL('./desk-render-run.js', import.meta.url))], {
          encoding: 'utf8',
          maxBuffer: 1 << 20,
        }),
      ) as DeskRenderRow | null);
  const versus = quick ? null : await linkerVersusBatch(20_000);
  const scale: ScaleRow[] = quick
    ? []
    : (JSON.parse(
        execFileSync(process.execPath, ['--max-old-space-size=8192', fileURLToPath(new URL('./link-scale-run.js', import.meta.url))], {
          encoding: 'utf8',
          maxBuffer: 1 << 20,
        }),
      ) as ScaleRow[]);
  // Scale-out rows need Redis (store.redis.url); without it they are left out with a note.
  const redisUp = quick ? false : await redisAnswers();
  const { rows: scaling, ceilings } = redisUp ? await workerScaling(await demoArticles(), rows[0]!.mentions) : { rows: [], ceilings: [] };
  const redisMem = redisUp ? await redisMemory(await demoTimesTen()) : null;
  const peakRssMiB = process.resourceUsage().maxRSS / 1024;
  const header = ['workload', 'articles', 'sentences', 'mentions', 'median s', 'sentences/s'];
  const table = rows.map((r) => [
    r.workload,
    String(r.articles),
    String(r.sentences),
    String(r.mentions),
    r.seconds.toFixed(3),
    r.sentencesPerSecond.toFixed(0),
  ]);
  const widths = header.map((h, i) => Math.max(h.length, ...table.map((t) => t[i]!.length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ');
  process.stdout.write(
    `Strandline ${version()} pipeline benchmark (median of ${REPEATS} runs; Node ${process.version}, default configuration)\n` +
      `${availableParallelism()} cores; articles analysed on ${threads === 0 ? 'the main thread' : `${threads} analysis thread(s)`}, linked and stored on the main thread\n\n`,
  );
  process.stdout.write(
    `${line(header)}\n${widths.map((w) => '-'.repeat(w)).join('  ')}\n${table.map(line).join('\n')}\n\npeak resident memory: ${peakRssMiB.toFixed(0)} MiB\n`,
  );
  process.stdout.write(
    `\npolling ${polling[0]!.feeds} feeds on a local server (poll.concurrency ${parseConfig({}).poll.concurrency}; a few feeds publish between rounds):\n` +
      `  round  requests  200  304  new items  body bytes  poller CPU ms  seconds\n` +
      polling
        .map(
          (r) =>
            `  ${String(r.round).padStart(5)}  ${String(r.requests).padStart(8)}  ${String(r.ok).padStart(3)}  ${String(r.notModified).padStart(3)}  ${String(r.newItems).padStart(9)}  ${String(r.bytes).padStart(10)}  ${r.cpuMs.toFixed(0).padStart(13)}  ${r.seconds.toFixed(2).padStart(7)}`,
        )
        .join('\n') +
      '\n',
  );
  if (largeFeed)
    process.stdout.write(
      `\none large feed into an existing store (its own process, default configuration):\n` +
        `  ${largeFeed.items} items, ${(largeFeed.feedBytes / 1048576).toFixed(1)} MiB: ${largeFeed.stored} stored, ${largeFeed.refused} refused, ${largeFeed.seconds.toFixed(1)} s, peak resident memory ${largeFeed.peakRssMiB.toFixed(0)} MiB\n`,
    );
  for (const row of evalSpeed)
    process.stdout.write(
      `\nstrandline eval as the command runs it (gold and predicted mentions, default sweep, every baseline) on a synthetic corpus, ${row.level}-level gold:\n` +
        `  ${row.articles} articles, ${row.goldMentions} gold mentions: ${row.seconds.toFixed(1)} s\n` +
        row.parts
          .map(
            (p) =>
              `  ${p.setting.padEnd(9)} text ${p.textSeconds.toFixed(1)} s; ${p.systems.map((y) => `${y.name.replace('baseline: ', '')} ${y.seconds.toFixed(2)} s`).join(', ')}`,
          )
          .join('\n') +
        '\n',
    );
  if (versus)
    process.stdout.write(
      `\nlinker (its link stage, committing to an in-memory store) vs batch all-pairs baseline (plain TF-IDF) on ${versus.mentions} synthetic mentions:\n` +
        `  online linker, link stage  ${versus.linkerSeconds.toFixed(2)} s   CoNLL F1 ${(versus.linkerConllF1 * 100).toFixed(1)}\n` +
        `  batch average-link         ${versus.batchSeconds.toFixed(2)} s   CoNLL F1 ${(versus.batchConllF1 * 100).toFixed(1)}\n` +
        `  the linker is ${versus.speedup.toFixed(1)}x faster\n`,
    );
  if (notify)
    process.stdout.write(
      `\nfrom a push accepted to the first notification naming it, ${notify.pushed} articles pushed at ${notify.articlesPerSecond}/s (${notify.notified} gave a notification):\n` +
        `  webhook received   p50 ${notify.webhookP50Ms.toFixed(0)} ms   p95 ${notify.webhookP95Ms.toFixed(0)} ms\n` +
        `  stream event       p50 ${notify.streamP50Ms.toFixed(0)} ms   p95 ${notify.streamP95Ms.toFixed(0)} ms\n`,
    );
  if (desk)
    process.stdout.write(
      `\nthe desk page in Chromium over ${desk.events.toLocaleString('en')} events and ${desk.stories.toLocaleString('en')} stories:\n` +
        `  first render       median ${desk.firstRenderMedianMs.toFixed(0)} ms   max ${desk.firstRenderMaxMs.toFixed(0)} ms (${desk.renders} fresh pages)\n` +
        `  live update        p50 ${desk.liveUpdateP50Ms.toFixed(0)} ms   p95 ${desk.liveUpdateP95Ms.toFixed(0)} ms   max ${desk.liveUpdateMaxMs.toFixed(0)} ms (${desk.liveUpdates} stream messages to paint)\n`,
    );
  else if (!quick) process.stdout.write('\nthe desk page: not measured (no Chromium at /usr/bin/chromium)\n');
  if (transformer)
    process.stdout.write(
      `\ntransformer embedder (MiniLM-L6-sized compute, generated weights) on the demo, ${transformer.mentions} mentions:\n` +
        `  model alone ${transformer.rawSeconds.toFixed(2)} s, whole pipeline ${transformer.pipelineSeconds.toFixed(2)} s: the pipeline keeps ${(transformer.ratio * 100).toFixed(0)}% of the model's throughput\n`,
    );
  if (scale.length)
    process.stdout.write(
      `\nlink step per mention as history grows (synthetic stream, window of 5,000 mentions after each size):\n` +
        `  stored mentions    events   median ms   p99 ms   RSS MiB   heap MiB\n` +
        scale
          .map(
            (r) =>
              `  ${String(r.storedMentions).padStart(15)}  ${String(r.events).padStart(8)}  ${r.medianMs.toFixed(3).padStart(10)}  ${r.p99Ms.toFixed(3).padStart(7)}  ${r.rssMiB.toFixed(0).padStart(8)}  ${r.heapMiB.toFixed(0).padStart(9)}`,
          )
          .join('\n') +
        `\n  median at the largest size / median at the smallest: ${(scale.at(-1)!.medianMs / scale[0]!.medianMs).toFixed(2)}\n`,
    );
  if (scaling.length) {
    const base = (embedder: string) => scaling.find((r) => r.embedder === embedder && r.workers === 1 && r.threadsPerWorker === '1')!;
    process.stdout.write(
      `\nworker processes on the Redis queue (rate between the 10th and 90th percent of answers; Redis and the measuring process share the cores):\n` +
        `  embedder                          articles  workers  threads/worker  seconds  articles/s  vs 1 worker\n` +
        scaling
          .map(
            (r) =>
              `  ${r.embedder.padEnd(32)}  ${String(r.articles).padStart(8)}  ${String(r.workers).padStart(7)}  ${r.threadsPerWorker.padStart(14)}  ${r.seconds.toFixed(2).padStart(7)}  ${r.articlesPerSecond.toFixed(0).padStart(10)}  ${(r.articlesPerSecond / base(r.embedder).articlesPerSecond).toFixed(2).padStart(11)}`,
          )
          .join('\n') +
        '\n',
    );
    process.stdout.write(
      `\nwhat a second process adds on this machine at all (the same work without Redis, 1 process, then 2 side by side):\n` +
        ceilings
          .map(
            (c) =>
              `  ${c.work.padEnd(42)}  1 process ${c.oneSeconds.toFixed(2)} s, 2 processes ${c.twoSeconds.toFixed(2)} s each: ${c.ceiling.toFixed(2)}x`,
          )
          .join('\n') +
        '\n',
    );
  } else if (!quick) {
    process.stdout.write('\nworker scaling and Redis memory: left out, Redis does not answer at store.redis.url\n');
  }
  if (redisMem)
    process.stdout.write(
      `\nRedis memory: ${(redisMem.bytes / 1048576).toFixed(1)} MiB for ${redisMem.articles} articles and ${redisMem.mentions} mentions: ${(redisMem.bytesPerMention / 1024).toFixed(1)} KiB per stored mention (${(redisMem.bytesPerArticle / 1024).toFixed(1)} KiB per article, text and linker state included)\n`,
    );
  mkdirSync('bench-results', { recursive: true });
  const file = join('bench-results', `bench-${new Date().toISOString().replace(/[:.]/g, '-')}.json`);
  writeFileSync(
    file,
    `${JSON.stringify({ version: version(), node: process.version, date: new Date().toISOString(), repeats: REPEATS, cores: availableParallelism(), analysisThreads: threads, rows, peakRssMiB, largeFeed, evalSpeed, linkerVersusBatch: versus, notifyLatency: notify, deskRender: desk, linkScale: scale, transformer, workerScaling: scaling, machineCeiling: ceilings, redisMemory: redisMem, pollRounds: polling }, null, 2)}\n`,
  );
  process.stdout.write(`written: ${file}\n`);
}

await main();
