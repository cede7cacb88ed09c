/** Routes for operators: health with ingest progress, and the webhook dead-letter list. */
import type { FastifyInstance } from 'fastify';
import type { Store } from '../../store/store.js';
import { deadLettersSchema, healthSchema } from '../schemas.js';

/** Progress of the replay or ingest the process is running. */
export interface IngestStatus {
  state: 'idle' | 'replaying' | 'finished';
  processed: number;
  total: number;
  stored: number;
  rejected: number;
}

/** Registers /api/health and /api/webhooks/dead-letters. */
export function registerOperationRoutes(app: FastifyInstance, deps: { store: Store; version: string; ingestStatus: () => IngestStatus }): void {
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
}
