/**
 * The query API and the analysts' page on fastify. Every route has a schema (validation,
 * serialisation and the OpenAPI document served at /openapi.json). Route handlers are
 * thin: they read the store they are handed and shape the answer.
 */
import fastify, { LogController, type FastifyBaseLogger, type FastifyInstance, type FastifyError, type FastifyReply } from 'fastify';
import cors from '@fastify/cors';
import rateLimit from '@fastify/rate-limit';
import swagger from '@fastify/swagger';
import { createHash } from 'node:crypto';
import { StrandError, isStrandError } from '../errors.js';
import type { Logger } from '../logger.js';
import type { Store } from '../store/store.js';
import type { IngestStatus, QueueView } from '../status.js';
import { eventRoutes } from './routes/events.js';
import { storyRoutes } from './routes/stories.js';
import { articleRoutes } from './routes/articles.js';
import { operationRoutes } from './routes/operations.js';
import { registerWebPage } from '../web/serve-page.js';
import { type PushLimits, type SubmitArticles, pushRoute } from './routes/push.js';
import { CAUTION } from './schemas.js';
import { type FeedControl, feedRoutes } from './routes/feeds.js';
import { type StreamDeps, streamRoute } from './routes/stream.js';
import { type SubscriptionDeps, subscriptionRoutes } from './routes/subscriptions.js';
import { Metrics } from './metrics.js';
import { type AccessPolicy, KeyRing, registerAccessCheck } from './access.js';
import { keyRoutes } from './routes/keys.js';
import { reviewRoutes } from './routes/reviews.js';
import { type LinkSettings, linkThresholdRoutes } from './routes/link-threshold.js';
import { type ApplyCorrection, correctionRoutes } from './routes/corrections.js';
import { parseJsonText } from '../ingest/parse-json-text.js';

const TOKEN_NOTE =
  'Keys: the operator\'s server.tokens (everything) and API keys with scopes (POST /api/keys, or `strandline keys create`): read (events, stories, articles, the stream), push (POST /api/articles only), manage (feeds, subscriptions, dead letters; includes read), admin (keys; everything). Each operation names the scope it needs. With neither tokens nor keys nothing is checked; with server.protect "changes" (the default) reads of events, stories and articles stay open. A missing or unknown key gets 401 (STRAND_UNAUTHORIZED), a key without the scope 403 (STRAND_FORBIDDEN).';

/** What the API is handed. */
export interface ApiDeps {
  store: Store;
  logger: Logger;
  version: string;
  ingestStatus: () => IngestStatus | Promise<IngestStatus>;
  /** The work queue of a scale-out deployment (Redis store); absent in a single process. */
  queue?: QueueView | undefined;
  /** Where pushed articles go; without it POST /api/articles is not offered. */
  push?: { submit: SubmitArticles; limits: PushLimits } | undefined;
  /** The feed poller of this process; without it the /api/feeds routes are not offered. */
  feeds?: FeedControl | undefined;
  /** How often the live stream reads the notification log and sends heartbeats (stream.ts defaults when absent). */
  stream?: Pick<StreamDeps, 'pollMs' | 'heartbeatMs'> | undefined;
  /** This process's metrics (the dispatcher reports into them too); absent: the app makes its own. */
  metrics?: Metrics | undefined;
  /** Requests a client may make a minute (0: unlimited) and the origins allowed to call from a browser; absent: neither. */
  access?: { requestsPerMinute: number; corsOrigins: readonly string[] } | undefined;
  /** Makes corrections in the linker's turn; absent (a Redis api process): the correction routes answer 503. */
  corrections?: ApplyCorrection | undefined;
  /** The configured link threshold; without it the /api/link-threshold routes are not offered. */
  linkSettings?: LinkSettings | undefined;
  /** Which webhook targets subscriptions may name (webhooks.allowPrivateNetworks, allowedNetworks); absent: no private ones. */
  webhooks?: SubscriptionDeps['webhooks'] | undefined;
  /** The operator's tokens and what keys protect (access.ts); absent: nothing is checked. */
  auth?: AccessPolicy | undefined;
}

/** GET /metrics */
const metricsSchema = {
  summary: 'Figures for Prometheus (text exposition format)',
  description:
    "Rows stored by kind, scale-out queue entries, polled feeds by health, webhook deliveries by outcome and their latency, the replay's progress, and the process's CPU, memory and event-loop delay. Open like /api/health: it carries counts, no text.",
  tags: ['operations'],
  response: { 200: { description: 'The figures.', content: { 'text/plain': { schema: { type: 'string' } } } } },
} as const;

const NO_PRIVATE_TARGETS = { allowPrivateNetworks: false, allowedNetworks: [] };

/** Seconds a client is asked to wait when the store is unreachable. */
const RETRY_AFTER_SECONDS = '5';

/** The 503 answer while the store cannot be reached. */
function storeUnavailable(reply: FastifyReply): FastifyReply {
  return reply
    .code(503)
    .header('retry-after', RETRY_AFTER_SECONDS)
    .send({
      error: {
        code: 'STRAND_STORE_UNAVAILABLE',
        message:
          'the store cannot be reached just now; nothing in this request was done (a push was not queued: send it again, articles already stored are recognised by their id)',
      },
    });
}

/** Builds the fastify app (not yet listening). */
export async function buildApp(deps: ApiDeps): Promise<FastifyInstance> {
  const app = fastify({
    loggerInstance: deps.logger.child({ stage: 'api' }) as FastifyBaseLogger,
    // No log line per request: the API is read-mostly and polled by the page.
    logController: new LogController({ disableRequestLogging: true }),
    bodyLimit: 1024 * 1024,
    // Refuse unknown query parameters instead of silently dropping them (a typo in a
    // filter should not return unfiltered results).
    ajv: { customOptions: { removeAdditional: false } },
    // Article ids are URLs; allow long, encoded path parameters.
    routerOptions: { maxParamLength: 2048 },
  });
  await app.register(swagger, {
    openapi: {
      openapi: '3.1.0',
      info: {
        title: 'Strandline API',
        version: deps.version,
        description: `Events reported in news feeds, the sentences that report them and the links between the two, grouped into stories (threads of coverage).\n\n${CAUTION}`,
      },
      tags: [
        { name: 'events' },
        { name: 'stories' },
        { name: 'articles' },
        { name: 'feeds' },
        { name: 'subscriptions' },
        { name: 'corrections' },
        { name: 'keys' },
        { name: 'operations' },
      ],
      components: { securitySchemes: { bearer: { type: 'http', scheme: 'bearer', description: TOKEN_NOTE } } },
      // Whether a key is needed depends on server.tokens, the keys made and server.protect (see the scheme).
      security: [{}, { bearer: [] }],
    },
  });
  app.setErrorHandler((err: FastifyError | StrandError, _req, reply) => {
    if (!isStrandError(err) && deps.store.unavailable(err)) return storeUnavailable(reply);
    if (isStrandError(err)) {
      if (err.status === 503) void reply.header('retry-after', RETRY_AFTER_SECONDS);
      return reply.code(err.status).send({ error: { code: err.code, message: err.message } });
    }
    if ((err as FastifyError).validation) return reply.code(400).send({ error: { code: 'STRAND_REQUEST_INVALID', message: err.message } });
    const status = (err as FastifyError).statusCode ?? 500;
    if (status >= 500) app.log.error({ err }, 'request failed');
    return reply.code(status).send({
      error: {
        code: status >= 500 ? 'STRAND_INTERNAL' : 'STRAND_REQUEST_INVALID',
        message: status >= 500 ? 'internal error' : err.message,
      },
    });
  });
  // Our own JSON parser: a poisoned key is refused with its reason (ingest/parse-json-text.ts).
  app.removeContentTypeParser('application/json');
  app.addContentTypeParser('application/json', { parseAs: 'string' }, (_req, body, done) => {
    try {
      done(null, parseJsonText(body as string));
    } catch (err) {
      done(err as Error, undefined);
    }
  });
  app.setNotFoundHandler((req, reply) =>
    reply.code(404).send({ error: { code: 'STRAND_NOT_FOUND', message: `no route ${req.method} ${req.url.split('?')[0]}` } }),
  );

  // While the store cannot be reached, every API request is answered 503 at once (with
  // Retry-After) instead of waiting on it; a push is then not queued at all.
  app.addHook('onRequest', async (req, reply) => {
    if (req.url.startsWith('/api/') && deps.store.unavailable()) return storeUnavailable(reply);
  });
  if (deps.access?.corsOrigins.length) {
    const origins = deps.access.corsOrigins;
    await app.register(cors, { origin: origins.includes('*') ? true : [...origins], methods: ['GET', 'POST', 'PATCH', 'DELETE'] });
  }
  if (deps.access?.requestsPerMinute) {
    await app.register(rateLimit, {
      max: deps.access.requestsPerMinute,
      timeWindow: 60_000,
      // A client is its token when it sends one (so scripts behind one address are told
      // apart), else its address; the token itself is not kept, only a hash of it.
      keyGenerator: (req) => {
        const auth = req.headers.authorization;
        return auth ? `token:${createHash('sha256').update(auth).digest('hex').slice(0, 32)}` : `address:${req.ip}`;
      },
      errorResponseBuilder: (_req, context) =>
        new StrandError('STRAND_RATE_LIMITED', `more than ${context.max} requests a minute; retry in ${context.after}`),
    });
  }
  // Checked whenever the operator set tokens or someone made keys, so the check is always in place.
  const keys = new KeyRing(deps.store);
  registerAccessCheck(app, deps.auth ?? { tokens: [], protect: 'changes' }, keys);
  // Each group of routes is a plugin with its schemas beside it (routes/, route-plugin.ts).
  await app.register(eventRoutes, { store: deps.store });
  await app.register(storyRoutes, { store: deps.store });
  await app.register(articleRoutes, { store: deps.store });
  await app.register(operationRoutes, { store: deps.store, version: deps.version, ingestStatus: deps.ingestStatus, queue: deps.queue });
  if (deps.push)
    await app.register(pushRoute, { store: deps.store, submit: deps.push.submit, limits: deps.push.limits, now: () => new Date() });
  if (deps.feeds) await app.register(feedRoutes, { feeds: deps.feeds });
  await app.register(streamRoute, { store: deps.store, ...deps.stream });
  await app.register(keyRoutes, { store: deps.store, keys, now: () => new Date() });
  await app.register(reviewRoutes, { store: deps.store, now: () => new Date(), apply: deps.corrections });
  await app.register(correctionRoutes, { store: deps.store, apply: deps.corrections });
  if (deps.linkSettings)
    await app.register(linkThresholdRoutes, { store: deps.store, settings: deps.linkSettings, apply: deps.corrections });
  await app.register(subscriptionRoutes, { store: deps.store, webhooks: deps.webhooks ?? NO_PRIVATE_TARGETS, now: () => new Date() });
  const metrics = (deps.metrics ?? new Metrics()).watch({
    store: deps.store,
    queue: deps.queue,
    feeds: deps.feeds,
    ingestStatus: deps.ingestStatus,
  });
  app.get('/metrics', { schema: metricsSchema }, async (_req, reply) =>
    reply.type(metrics.registry.contentType).send(await metrics.registry.metrics()),
  );
  registerWebPage(app);
  app.get('/openapi.json', { schema: { hide: true } }, async () => app.swagger());
  await app.ready();
  return app;
}
