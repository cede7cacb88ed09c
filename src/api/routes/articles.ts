/** Routes: one article with its sentences and their links; the outlets list. */
import type { FastifyInstance } from 'fastify';
import { StrandError } from '../../errors.js';
import type { EventQueries } from '../../store/store.js';
import { CAUTION, getArticleSchema, listOutletsSchema } from '../schemas.js';

/** Registers /api/articles/:id and /api/outlets. */
export function registerArticleRoutes(app: FastifyInstance, store: EventQueries): void {
  app.get<{ Params: { id: string } }>('/api/articles/:id', { schema: getArticleSchema }, async (req) => {
    const detail = await store.getArticle(req.params.id);
    if (!detail) throw new StrandError('STRAND_NOT_FOUND', `no article ${req.params.id}`);
    return { ...detail, caution: CAUTION };
  });

  app.get('/api/outlets', { schema: listOutletsSchema }, async () => ({ outlets: await store.listOutlets() }));
}
