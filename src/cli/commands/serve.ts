/**
 * `strandline serve`: the query API and the analysts' page, the webhook dispatcher, the
 * retention sweep, and (with --demo or --replay) a replay into the store while serving.
 * Over 350 lines because it composes every role (all, api, worker, linker) in one place,
 * each as a ServiceStack, so their start and stop orders can be read side by side.
 */
import { WebhookDispatcher } from '../../notify/webhook-dispatcher.js';
import { applyCorrection } from '../../link/corrections.js';
import { buildApp } from '../../api/build-app.js';
import { Metrics } from '../../api/metrics.js';
import type { IngestStatus } from '../../status.js';
import type { Config } from '../../config/schema.js';
import { StrandError } from '../../errors.js';
import { ServiceStack } from '../../lifecycle/service-stack.js';
import { Lease } from '../../distribute/lease.js';
import { checkRole, openQueue, startLinker, startWorker } from '../../distribute/roles.js';
import { QueuedReplay } from '../../distribute/replay-progress.js';
import { CorrectionQueue } from '../../distribute/correction-queue.js';
import { readReplayInput } from '../../ingest/replay-source.js';
import type { Logger } from '../../logger.js';
import { LocalIntake } from '../../local-intake.js';
import { FeedPoller } from '../../poll/feed-poller.js';
import type { Article } from '../../records.js';
import type { Store } from '../../store/store.js';
import { createRuntime } from '../../runtime.js';
import { openStore } from '../../store/open-store.js';
import { keyspace } from '../../store/redis/keys.js';
import { RetentionSweeper } from '../../store/retention-sweeper.js';
import { type CommonOptions, DEMO_FEEDS, setup, version } from '../common.js';
import { formatSummary, runSources } from '../run-sources.js';
import { listenForStop } from '../stop-signals.js';

/** Options of serve. */
export interface ServeOptions extends CommonOptions {
  role?: string;
  demo?: boolean;
  replay?: string[];
  host?: string;
  port?: number;
}

/** Serves until SIGINT/SIGTERM; resolves with the exit code. */
export async function serveCommand(opts: ServeOptions): Promise<number> {
  const server: Record<string, unknown> = {};
  if (opts.host) server.host = opts.host;
  if (opts.port !== undefined) server.port = opts.port;
  // The demo gets its own store file so it never mixes with an operator's data.
  const demoDb = opts.demo && !opts.db ? { store: { path: 'data/demo.sqlite' } } : {};
  const { config, logger } = setup(opts, {
    ...demoDb,
    ...(Object.keys(server).length ? { server } : {}),
    ...(opts.role ? { process: { role: opts.role } } : {}),
  });
  checkRole(config);
  // Listening from the start: a signal during start-up stops the server as soon as it is up.
  const stop = listenForStop(`the ${config.process.role === 'all' ? 'server' : `${config.process.role} process`}`);
  try {
    if (config.process.role === 'worker' || config.process.role === 'linker') await serveQueueRole(config, logger, stop.requested);
    else if (config.process.role === 'api')
      await serveApiRole(config, logger, [...(opts.demo ? [DEMO_FEEDS] : []), ...(opts.replay ?? [])], stop.requested);
    else await serveAll(config, logger, opts, stop.requested, stop.signal);
    process.stdout.write('stopped\n');
    return 0;
  } finally {
    stop.dispose();
  }
}

/**
 * The single process: everything, on any store. Its parts start in this order and stop in
 * the reverse one: the replay ends first, then the sweeper, the poller and the server (no
 * new pushes), then the intake drains, the dispatcher stops and the stores close.
 */
async function serveAll(
  config: Readonly<Config>,
  logger: Logger,
  opts: ServeOptions,
  requested: Promise<unknown>,
  stopping: AbortSignal,
): Promise<void> {
  const parts = new ServiceStack(logger);
  const status: IngestStatus = { state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 };
  const rt = await parts.add(
    'runtime',
    () => createRuntime(config, logger),
    (r) => r.close(),
  );
  // On Redis the API reads through a connection of its own that fails at once while Redis is
  // away (503), where the pipeline's waits for it to come back.
  const apiStore =
    config.store.kind === 'redis'
      ? await parts.add(
          'api store',
          () => openStore(config.store, logger, { failFast: true }),
          (st) => st.close(),
        )
      : rt.store;
  // One set of figures for the process: the dispatcher reports deliveries into what /metrics serves.
  const metrics = new Metrics();
  await parts.add(
    'webhook dispatcher',
    () => {
      const d = new WebhookDispatcher({ store: rt.store, config: config.webhooks, logger, observer: metrics });
      d.start();
      return d;
    },
    (d) => d.stop(),
  );
  // Pushed articles and the replay take turns on the one pipeline; stopping waits for it to drain.
  const intake = await parts.add(
    'intake',
    () =>
      new LocalIntake(rt, (o) => {
        if (o.status === 'rejected') logger.warn({ article: o.articleId, reason: o.reason }, 'pushed article rejected');
      }),
    (i) => i.idle(),
  );
  const poller = await loadPoller(config, logger, rt.store, (a) => intake.submit(a));
  const { address } = await parts.add(
    'server',
    () =>
      listening(
        buildApp({
          store: apiStore,
          logger,
          version: version(),
          ingestStatus: () => status,
          push: { submit: (a) => intake.submit(a), limits: config.ingest },
          feeds: poller ?? undefined,
          // Corrections take their turn on the one pipeline, between batches and the replay.
          corrections: (req, author) => intake.exclusive(() => applyCorrection(rt, req, author)),
          linkSettings: { threshold: config.link.threshold, calibration: config.link.calibration.mode },
          auth: config.server,
          webhooks: config.webhooks,
          access: config.server,
          metrics,
        }),
        config,
      ),
    (s) => s.app.close(),
  );
  warnIfOpen(config, logger);
  const shown = address.replace('//127.0.0.1', '//localhost');
  process.stdout.write(
    `Strandline is serving on ${shown}\n  page:    ${shown}/\n  API:     ${shown}/api/events\n  OpenAPI: ${shown}/openapi.json\n`,
  );
  if (poller)
    await parts.add(
      'poller',
      () => startPolling(poller),
      (p) => p.stop(),
    );
  await parts.add(
    'retention sweeper',
    async () => {
      const sweeper = new RetentionSweeper({
        store: rt.store,
        textDays: config.retention.textDays,
        notificationDays: config.retention.notificationDays,
        logger,
      });
      await sweeper.start();
      return sweeper;
    },
    (sw) => sw.stop(),
  );

  const sources = [...(opts.demo ? [DEMO_FEEDS] : []), ...(opts.replay ?? [])];
  if (sources.length) {
    const replay = (async () => {
      status.state = 'replaying';
      process.stdout.write(
        `Replaying ${sources.join(', ')} into ${config.store.kind === 'redis' ? `Redis partition ${config.store.redis.partition}` : config.store.path} …\n`,
      );
      const summary = await intake.exclusive(() =>
        runSources(
          rt,
          sources,
          { signal: stopping },
          {
            onRead: (total) => {
              status.total = total;
            },
            onOutcome: (o, done) => {
              status.processed = done;
              if (o.status === 'stored') status.stored++;
              if (o.status === 'rejected') status.rejected++;
            },
          },
        ),
      );
      status.state = 'finished';
      process.stdout.write(
        `${formatSummary(summary)}\n${stopping.aborted ? 'Replay stopped' : `Replay finished; still serving on ${shown}/ (Ctrl+C to stop)`}\n`,
      );
    })().catch((err: unknown) => {
      status.state = 'finished';
      logger.error({ err }, 'replay failed');
    });
    // Runs while the server serves; the signal aborts it, and stopping waits for it to wind down.
    await parts.add(
      'replay',
      () => ({ running: replay }),
      (r) => r.running,
    );
  }

  await requested;
  process.stdout.write('stopping…\n');
  await parts.stop();
}

/** A poller with the feed list loaded (from the store and the configuration), not yet polling; null when poll.enabled is off. */
async function loadPoller(
  config: Readonly<Config>,
  logger: Logger,
  store: Store,
  submit: (a: readonly Article[]) => Promise<void>,
  polls?: () => boolean,
): Promise<FeedPoller | null> {
  if (!config.poll.enabled) return null;
  const poller = new FeedPoller({ store, submit, limits: config.ingest, options: config.poll, logger, ...(polls ? { polls } : {}) });
  await poller.load(config.poll.feeds);
  return poller;
}

/** Starts polling and says how many feeds. */
function startPolling(poller: FeedPoller): FeedPoller {
  poller.start();
  const n = poller.list().length;
  if (n) process.stdout.write(`Polling ${n} feed(s) (GET /api/feeds for their health)\n`);
  return poller;
}

/** `--role worker` or `--role linker`: no HTTP; runs until a signal. */
async function serveQueueRole(config: Readonly<Config>, logger: Logger, requested: Promise<unknown>): Promise<void> {
  const role = config.process.role;
  const parts = new ServiceStack(logger);
  if (role === 'worker') {
    await parts.add(
      'worker',
      () => startWorker(config, logger),
      (w) => w.stop(),
    );
  } else {
    const running = await parts.add(
      'linker',
      () => startLinker(config, logger),
      (l) => l.stop(),
    );
    await parts.add(
      'webhook dispatcher',
      () => {
        const d = new WebhookDispatcher({ store: running.runtime.store, config: config.webhooks, logger });
        d.start();
        return d;
      },
      (d) => d.stop(),
    );
  }
  process.stdout.write(`Strandline ${role} running on Redis partition ${config.store.redis.partition} (Ctrl+C to stop)\n`);
  await requested;
  process.stdout.write('stopping…\n');
  await parts.stop();
}

/** `--role api`: queries and the page over the shared store; feeds given to it are queued for the workers. */
async function serveApiRole(
  config: Readonly<Config>,
  logger: Logger,
  sources: readonly string[],
  requested: Promise<unknown>,
): Promise<void> {
  const parts = new ServiceStack(logger);
  // Fail fast: while Redis is away, requests are answered 503 at once rather than left hanging.
  const store = await parts.add(
    'store',
    () => openStore(config.store, logger, { failFast: true }),
    (st) => st.close(),
  );
  const queue = await parts.add(
    'queue',
    () => openQueue(config, logger, { failFast: true }),
    (q) => q.close(),
  );
  const corrections = new CorrectionQueue(queue.redis, keyspace(config.store.redis.partition));
  // The replay's progress is the other processes' work: read from the queue and the store.
  const replay = new QueuedReplay(queue, store);
  // A push is queued whole or not at all (its client is told one or the other).
  const submit = async (a: readonly Article[]): Promise<void> => void (await queue.enqueue(a, { atomic: true }));
  // Every api process serves the feeds; the one holding the partition's poll lease polls them.
  const lease = await parts.add(
    'poll lease',
    async () => {
      const l = new Lease(queue.redis, keyspace(config.store.redis.partition).pollLease, 'feed poller', logger);
      if (config.poll.enabled) await l.start();
      return l;
    },
    (l) => l.stop(),
  );
  const poller = await loadPoller(config, logger, store, submit, () => lease.held);
  if (poller)
    await parts.add(
      'poller',
      () => startPolling(poller),
      (p) => p.stop(),
    );
  const { address } = await parts.add(
    'server',
    () =>
      listening(
        buildApp({
          store,
          logger,
          version: version(),
          ingestStatus: () => replay.status(),
          queue,
          push: { submit, limits: config.ingest },
          feeds: poller ?? undefined,
          // Made by the linker process in its turn; this process queues them and waits for the answer.
          corrections: (req, author) => corrections.submit(req, author),
          linkSettings: { threshold: config.link.threshold, calibration: config.link.calibration.mode },
          auth: config.server,
          webhooks: config.webhooks,
          access: config.server,
        }),
        config,
      ),
    (s) => s.app.close(),
  );
  warnIfOpen(config, logger);
  process.stdout.write(`Strandline api is serving on ${address.replace('//127.0.0.1', '//localhost')}\n`);
  if (sources.length) {
    const input = await readReplayInput(sources, config.ingest);
    await replay.begin(input.articles.length);
    await queue.enqueue(input.articles);
    process.stdout.write(`Queued ${input.articles.length} articles from ${sources.join(', ')} for the workers\n`);
  }
  await requested;
  process.stdout.write('stopping…\n');
  await parts.stop();
}

/** Says so when the API listens beyond this machine with nothing checked. */
function warnIfOpen(config: Readonly<Config>, logger: Logger): void {
  const host = config.server.host;
  if (config.server.tokens.length > 0 || host === 'localhost' || host === '::1' || host.startsWith('127.')) return;
  logger.warn(
    { host },
    'the API listens beyond this machine without server.tokens: anyone who can reach it can push articles and change feeds',
  );
}

/** The app, listening; closed again when it cannot listen. */
async function listening<A extends { listen(o: { host: string; port: number }): Promise<string>; close(): Promise<unknown> }>(
  building: Promise<A>,
  config: Readonly<Config>,
): Promise<{ app: A; address: string }> {
  const app = await building;
  try {
    return { app, address: await listenOn(app, config) };
  } catch (err) {
    await app.close();
    throw err;
  }
}

/** Starts listening; a port in use or not allowed is one clear line, naming how to choose another. */
async function listenOn(app: { listen(o: { host: string; port: number }): Promise<string> }, config: Readonly<Config>): Promise<string> {
  const { host, port } = config.server;
  try {
    return await app.listen({ host, port });
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    const why =
      code === 'EADDRINUSE'
        ? 'the port is in use'
        : code === 'EACCES'
          ? 'not allowed to use this port'
          : code === 'EADDRNOTAVAIL'
            ? 'no such address on this machine'
            : (err as Error).message;
    throw new StrandError(
      'STRAND_LISTEN_FAILED',
      `cannot listen on ${host}:${port}: ${why} (choose another with --port, PORT or server.port; --host, HOST or server.host)`,
      { cause: err },
    );
  }
}
