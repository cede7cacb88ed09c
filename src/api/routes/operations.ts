/** Routes for operators: health with ingest progress, the webhook dead letters, and the scale-out queue. */
import type { IngestStatus, QueueView } from '../../status.js';
import type { Store } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { int, limitQuery, nullableStr, num, str } from '../schemas.js';

/** GET /api/health */
const healthSchema = {
  summary: 'Liveness, counts and ingest progress',
  tags: ['operations'],
  response: {
    200: {
      type: 'object',
      properties: {
        status: { type: 'string', enum: ['ok'] },
        version: str,
        uptimeSeconds: num,
        counts: {
          type: 'object',
          properties: { articles: int, sentences: int, mentions: int, links: int, events: int, stories: int },
          required: ['articles', 'sentences', 'mentions', 'links', 'events', 'stories'],
        },
        ingest: {
          type: 'object',
          properties: {
            state: { type: 'string', enum: ['idle', 'replaying', 'finished'] },
            processed: int,
            total: int,
            stored: int,
            rejected: int,
          },
          required: ['state', 'processed', 'total', 'stored', 'rejected'],
        },
      },
      required: ['status', 'version', 'uptimeSeconds', 'counts', 'ingest'],
    },
  },
} as const;
/** GET /api/webhooks/dead-letters */
const deadLettersSchema = {
  summary: 'Webhook deliveries that gave up',
  description: 'Newest first. A dead letter is deleted with its notification retention.notificationDays (30 by default) after it gave up.',
  tags: ['operations'],
  querystring: limitQuery,
  response: {
    200: {
      type: 'object',
      properties: {
        deliveries: {
          type: 'array',
          items: {
            type: 'object',
            properties: { messageId: str, subscriber: str, type: str, created: str, attempts: int, lastError: nullableStr },
            required: ['messageId', 'subscriber', 'type', 'created', 'attempts', 'lastError'],
          },
        },
      },
      required: ['deliveries'],
    },
  },
} as const;
const queueSchema = {
  summary: 'Work waiting in a scale-out deployment: articles for the workers, analysed articles for the linker, dead letters',
  tags: ['operations'],
  response: {
    200: { type: 'object', properties: { intake: int, analysed: int, deadLetters: int }, required: ['intake', 'analysed', 'deadLetters'] },
  },
} as const;
const queueDeadLettersSchema = {
  summary: 'Queued articles the workers gave up on after repeated failures, newest first, with the last error',
  tags: ['operations'],
  querystring: limitQuery,
  response: {
    200: {
      type: 'object',
      properties: {
        entries: {
          type: 'array',
          items: {
            type: 'object',
            properties: { id: str, entry: str, error: str, article: str },
            required: ['id', 'entry', 'error', 'article'],
          },
        },
      },
      required: ['entries'],
    },
  },
} as const;

/** What the operator routes read. */
export interface OperationDeps {
  store: Pick<Store, 'counts' | 'deadLetters'>;
  version: string;
  /** The process's own replay or, in a scale-out api process, the queued replay's progress (read from Redis). */
  ingestStatus: () => IngestStatus | Promise<IngestStatus>;
  /** The work queue of a scale-out deployment; without it /api/queue is not offered. */
  queue?: QueueView | undefined;
}

/** /api/health, /api/webhooks/dead-letters and, with a queue, /api/queue and /api/queue/dead-letters. */
export const operationRoutes: RoutePlugin<OperationDeps> = async (app, deps) => {
  const started = Date.now();
  app.get('/api/health', { schema: healthSchema }, async () => ({
    status: 'ok' as const,
    version: deps.version,
    uptimeSeconds: (Date.now() - started) / 1000,
    counts: await deps.store.counts(),
    ingest: await deps.ingestStatus(),
  }));

  app.get('/api/webhooks/dead-letters', { schema: deadLettersSchema }, async (req) => ({
    deliveries: await deps.store.deadLetters(req.query.limit),
  }));

  const queue = deps.queue;
  if (!queue) return;
  app.get('/api/queue', { schema: queueSchema }, async () => queue.depth());
  app.get('/api/queue/dead-letters', { schema: queueDeadLettersSchema }, async (req) => ({
    entries: await queue.deadLetters(req.query.limit),
  }));
};
