/**
 * Scale-out measurements on Redis (the store.redis.url of the default configuration):
 *
 *   worker throughput  articles queued on the intake stream, then answered by 1 or 2
 *                      worker processes (analysis, event sentences and, with the
 *                      transformer, embedding); the rate between the 10th and 90th percent
 *                      of answers, when every worker is running;
 *   ceiling            the same work without Redis in 1 process, then in 2 side by side:
 *                      how much a second process can add on this machine at all;
 *   Redis memory       used_memory before and after one process stores the demo x10 in a
 *                      fresh partition, per stored mention and per article.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { from, lastValueFrom, toArray } from 'rxjs';
import { parseConfig } from '../config/load-config.js';
import { enqueueArticles, ensureIntake } from '../distribute/intake.js';
import { createLogger } from '../logger.js';
import { runPipeline } from '../pipeline/index.js';
import type { Article } from '../records.js';
import { createRuntime } from '../runtime.js';
import { keyspace } from '../store/redis/keys.js';
import { connectRedis, deleteMatching } from '../store/redis/connect.js';
import { openRedisStore } from '../store/redis/redis-store.js';
import { SPECIAL_TOKENS, writeModel } from './build-onnx-model.js';

/** One worker-throughput measurement. */
export interface WorkerRow {
  embedder: string;
  workers: number;
  threadsPerWorker: string;
  articles: number;
  mentions: number;
  /** Between the 10th and the 90th percent of answers. */
  seconds: number;
  articlesPerSecond: number;
}

/** How much a second process adds to the same work on this machine, without Redis. */
export interface CeilingRow {
  work: string;
  oneSeconds: number;
  /** The slower of two processes doing the same work side by side. */
  twoSeconds: number;
  /** Throughput of two processes over one: 2 x one / two. */
  ceiling: number;
}

/** Redis memory per stored record. */
export interface RedisMemoryRow {
  articles: number;
  mentions: number;
  bytes: number;
  bytesPerMention: number;
  bytesPerArticle: number;
}

const REDIS_URL = parseConfig({}).store.redis.url;
const CLI = fileURLToPath(new URL('../cli/main.js', import.meta.url));
const ALONE = fileURLToPath(new URL('./work-alone-run.js', import.meta.url));

/** True when the configured Redis answers. */
export async function redisAnswers(): Promise<boolean> {
  try {
    const r = await connectRedis(REDIS_URL, { retryStrategy: () => null, connectTimeout: 1000 });
    r.disconnect();
    return true;
  } catch {
    return false;
  }
}

/** Worker throughput with 1 and 2 worker processes, with the default embedder and a MiniLM-sized transformer. */
export async function workerScaling(
  demo: readonly Article[],
  demoMentions: number,
): Promise<{ rows: WorkerRow[]; ceilings: CeilingRow[] }> {
  // TF-IDF workers are fast: ten copies of the demo; transformer workers: three.
  const many = copiesOf(demo, 10);
  const few = copiesOf(demo, 3);
  const dir = mkdtempSync(join(tmpdir(), 'strandline-scaling-'));
  try {
    const words = new Set<string>();
    for (const a of demo) for (const w of a.text.toLowerCase().match(/[a-z]+|[0-9]+|[^\sa-z0-9]/g) ?? []) words.add(w);
    const model = join(dir, 'minilm-sized');
    writeModel(model, { vocab: [...SPECIAL_TOKENS, ...[...words].sort()], hidden: 384, blocks: 9 });
    const rows: WorkerRow[] = [];
    for (const workers of [1, 2])
      rows.push(await timeWorkers(dir, many, demoMentions * 10, workers, { kind: 'tfidf' }, 'default (TF-IDF: linker embeds)', '1'));
    for (const workers of [1, 2])
      rows.push(
        await timeWorkers(
          dir,
          few,
          demoMentions * 3,
          workers,
          { kind: 'transformer', modelPath: model, threads: 1 },
          'transformer (MiniLM-L6-sized)',
          '1',
        ),
      );
    rows.push(
      await timeWorkers(
        dir,
        few,
        demoMentions * 3,
        1,
        { kind: 'transformer', modelPath: model, threads: 0 },
        'transformer (MiniLM-L6-sized)',
        'all cores',
      ),
    );
    const ceilings = [
      await ceiling('analysis and event sentences (wink-nlp)', ['analysis', '10']),
      await ceiling('transformer model alone', ['model', model, '3']),
    ];
    return { rows, ceilings };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

async function timeWorkers(
  dir: string,
  articles: readonly Article[],
  mentions: number,
  count: number,
  embed: Record<string, unknown>,
  embedder: string,
  threadsPerWorker: string,
): Promise<WorkerRow> {
  const partition = `bench-${randomUUID()}`;
  const raw = {
    store: { kind: 'redis', redis: { url: REDIS_URL, partition } },
    embed,
    queue: { blockMs: 100, batch: 8 },
    analysis: { threads: 0 },
    log: { level: 'warn' },
  };
  const configFile = join(dir, `${partition}.json`);
  writeFileSync(configFile, JSON.stringify(raw));
  const keys = keyspace(partition);
  const redis = await connectRedis(REDIS_URL);
  const procs: ChildProcess[] = [];
  try {
    await ensureIntake(redis, keys);
    // Everything is queued first, so that queueing costs the workers nothing; the rate is
    // taken between the 10th and the 90th percent of answers (steady state: every worker
    // has loaded its models and none is idle at the end).
    await enqueueArticles(redis, keys, articles);
    let failure = '';
    for (let i = 0; i < count; i++) {
      const p = spawn(process.execPath, [CLI, 'serve', '--role', 'worker', '--config', configFile], {
        stdio: ['ignore', 'ignore', 'pipe'],
      });
      let stderr = '';
      p.stderr!.on('data', (d: Buffer) => {
        stderr += d.toString();
      });
      p.once('exit', (code) => {
        failure ||= `a worker process exited (${code}): ${stderr.trim().slice(0, 500)}`;
      });
      procs.push(p);
    }
    const at = async (share: number): Promise<number> => {
      while ((await redis.hlen(keys.answered)) < Math.ceil(articles.length * share)) {
        if (failure) throw new Error(failure);
        await sleep(10);
      }
      return performance.now();
    };
    const t0 = await at(0.1);
    const t1 = await at(0.9);
    await at(1);
    const seconds = (t1 - t0) / 1000;
    return {
      embedder,
      workers: count,
      threadsPerWorker,
      articles: articles.length,
      mentions,
      seconds,
      articlesPerSecond: (Math.ceil(articles.length * 0.9) - Math.ceil(articles.length * 0.1)) / seconds,
    };
  } finally {
    for (const p of procs) p.kill('SIGTERM');
    await deleteMatching(redis, keys.pattern);
    redis.disconnect();
  }
}

/** Stores `articles` in a fresh partition with one process and reads how much Redis memory it took. */
export async function redisMemory(articles: readonly Article[]): Promise<RedisMemoryRow> {
  const partition = `bench-${randomUUID()}`;
  const config = parseConfig({
    store: { kind: 'redis', redis: { url: REDIS_URL, partition } },
    analysis: { threads: 0 },
    log: { level: 'silent' },
  });
  const store = await openRedisStore({ url: REDIS_URL, partition });
  try {
    const before = await store.usedMemory();
    const rt = await createRuntime(config, createLogger('silent'), store);
    await lastValueFrom(runPipeline(from(articles), rt).pipe(toArray()));
    const counts = await store.counts();
    const bytes = (await store.usedMemory()) - before;
    return {
      articles: counts.articles,
      mentions: counts.mentions,
      bytes,
      bytesPerMention: bytes / counts.mentions,
      bytesPerArticle: bytes / counts.articles,
    };
  } finally {
    await store.dropPartition();
    await store.close();
  }
}

function sleep(ms: number): Promise<void> {
  return new Promise((r) => setTimeout(r, ms));
}

/** `n` copies of the articles under new ids (the workers do not check for copies). */
function copiesOf(base: readonly Article[], n: number): Article[] {
  return Array.from({ length: n }, (_, k) =>
    base.map((a) => ({ ...a, id: `${a.id}#w${k}`, url: a.url ? `${a.url}?w=${k}` : null })),
  ).flat();
}

/** Runs work-alone-run.js once alone, then twice side by side. */
async function ceiling(work: string, args: string[]): Promise<CeilingRow> {
  const once = () =>
    new Promise<number>((resolve, reject) => {
      const p = spawn(process.execPath, [ALONE, ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
      let out = '';
      let err = '';
      p.stdout!.on('data', (d: Buffer) => {
        out += d.toString();
      });
      p.stderr!.on('data', (d: Buffer) => {
        err += d.toString();
      });
      p.once('exit', (code) =>
        code === 0 ? resolve(Number(out.trim())) : reject(new Error(`work-alone-run ${args[0]} exited ${code}: ${err.slice(0, 500)}`)),
      );
    });
  const oneSeconds = await once();
  const twoSeconds = Math.max(...(await Promise.all([once(), once()])));
  return { work, oneSeconds, twoSeconds, ceiling: (2 * oneSeconds) / twoSeconds };
}
