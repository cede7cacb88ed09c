/** Routes for operators: health with ingest progress, and the webhook dead-letter list. */
import type { FastifyInstance } from 'fastify';
import type { Store } from '../../store/store.js';
import type { DeadLetter } from '../../distribute/intake.js';
import { deadLettersSchema, healthSchema, queueDeadLettersSchema, queueSchema } from '../schemas.js';

/** Progress of the replay or ingest the process is running. */
export interface IngestStatus {
  state: 'idle' | 'replaying' | 'finished';
  processed: number;
  total: number;
  stored: number;
  rejected: number;
}

/** The work queue as the API shows it. */
export interface QueueView {
  depth(): Promise<{ intake: number; analysed: number; deadLetters: number }>;
  deadLetters(limit: number): Promise<DeadLetter[]>;
}

/** Registers /api/health, /api/webhooks/dead-letters and, with a queue, /api/queue and /api/queue/dead-letters. */
export function registerOperationRoutes(
  app: FastifyInstance,
  deps: { store: Store; version: string; ingestStatus: () => IngestStatus; queue?: QueueView | undefined },
): void {
  const started = Date.now();
  app.get('/api/health', { schema: healthSchema }, async () => ({
    status: 'ok' as const,
    version: deps.version,
    uptimeSeconds: (Date.now() - started) / 1000,
    counts: await deps.store.counts(),
    ingest: deps.ingestStatus(),
  }));

  app.get<{ Querystring: { limit: number } }>('/api/webhooks/dead-letters', { schema: deadLettersSchema }, async (req) => ({
    deliveries: await deps.store.deadLetters(req.query.limit),
  }));

  const queue = deps.queue;
  if (!queue) return;
  app.get('/api/queue', { schema: queueSchema }, async () => queue.depth());
  app.get<{ Querystring: { limit: number } }>('/api/queue/dead-letters', { schema: queueDeadLettersSchema }, async (req) => ({
    entries: await queue.deadLetters(req.query.limit),
  }));
}
