/** Test helpers: a runtime on an in-memory (or given) SQLite store, and running articles through it. */
import type { FastifyInstance } from 'fastify';
import { from, lastValueFrom, toArray } from 'rxjs';
import { type ApiDeps, buildApp } from '../../src/api/build-app.js';
import { applyCorrection } from '../../src/link/corrections.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { parseConfig } from '../../src/config/load-config.js';
import type { Config } from '../../src/config/schema.js';
import { createLogger } from '../../src/logger.js';
import { type ArticleOutcome, runPipeline } from '../../src/pipeline/index.js';
import type { Article } from '../../src/records.js';
import { type Runtime, createRuntime } from '../../src/runtime.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';

/** A validated configuration with overrides on top of the defaults. */
export function testConfig(overrides: Record<string, unknown> = {}): Readonly<Config> {
  // Analysis on the main thread unless a test asks for threads (each thread loads a model).
  return parseConfig({ store: { path: ':memory:' }, log: { level: 'silent' }, analysis: { threads: 0 }, ...overrides });
}

/** A runtime on a fresh in-memory store (or on `path`). */
export async function testRuntime(overrides: Record<string, unknown> = {}, path = ':memory:'): Promise<Runtime> {
  const config = testConfig(overrides);
  return createRuntime(config, createLogger('silent'), openSqliteStore(path));
}

/** Runs articles through the pipeline and collects the outcomes. */
export function runArticles(rt: Runtime, articles: Article[]): Promise<ArticleOutcome[]> {
  return lastValueFrom(runPipeline(from(articles), rt).pipe(toArray()));
}

/** A runtime holding the whole demo, and the API app over it (not listening). */
export async function demoApi(): Promise<{ rt: Runtime; app: FastifyInstance }> {
  const rt = await testRuntime();
  await runArticles(rt, (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles);
  const app = await buildApp({
    store: rt.store,
    logger: createLogger('silent'),
    version: 'test',
    ingestStatus: () => ({ state: 'finished', processed: 101, total: 101, stored: 101, rejected: 0 }),
  });
  return { rt, app };
}

/** The API app over a runtime that makes corrections (threshold moves included) in its turn, as `serve` does; not listening. */
export function linkingApp(rt: Runtime, extra: Partial<ApiDeps> = {}): Promise<FastifyInstance> {
  return buildApp({
    store: rt.store,
    logger: createLogger('silent'),
    version: 'test',
    ingestStatus: () => ({ state: 'finished', processed: 0, total: 0, stored: 0, rejected: 0 }),
    corrections: (req, author) => applyCorrection(rt, req, author),
    linkSettings: { threshold: rt.config.link.threshold, calibration: rt.config.link.calibration.mode },
    ...extra,
  });
}
