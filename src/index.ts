/**
 * Strandline's public entry point: the pieces a program embedding Strandline uses.
 * The command line (src/cli/main.ts) is built on the same exports.
 */
export { loadConfig, parseConfig } from './config/load-config.js';
export type { Config, Subscriber } from './config/schema.js';
export { StrandError, isStrandError, ERROR_CODES, type ErrorCode } from './errors.js';
export type * from './records.js';
export { createLogger } from './logger.js';
export { createRuntime, type Runtime } from './runtime.js';
export { runPipeline, type ArticleOutcome, type PipelineContext } from './pipeline/index.js';
export { readReplayInput } from './ingest/replay-source.js';
export { readFeedDocument, listFeedFiles } from './ingest/read-source.js';
export { parseFeed } from './ingest/parse-feed.js';
export type { Store } from './store/store.js';
export { openSqliteStore } from './store/sqlite/sqlite-store.js';
export type { Embedder, EmbedInput } from './embed/embedder.js';
export { TfidfEmbedder } from './embed/tfidf-embedder.js';
export { OnlineLinker, type LinkerOptions } from './link/online-linker.js';
export { buildApp } from './api/build-app.js';
export { signWebhook } from './notify/sign-webhook.js';
export { WebhookDispatcher } from './notify/webhook-dispatcher.js';
export { pairwiseLinkScores } from './eval/pairwise-links.js';
