/** The polled feeds: list with health, add, pause/resume/change, remove. */
import type { FastifyInstance } from 'fastify';
import { StrandError } from '../../errors.js';
import type { FeedPoller } from '../../poll/feed-poller.js';
import { median } from '../../poll/schedule.js';
import type { FeedEntry } from '../../store/store.js';
import { addFeedSchema, changeFeedSchema, listFeedsSchema, removeFeedSchema } from '../schemas.js';

/** What the routes need of the poller. */
export type FeedControl = Pick<FeedPoller, 'list' | 'add' | 'update' | 'remove'>;

export function registerFeedRoutes(app: FastifyInstance, feeds: FeedControl): void {
  app.get('/api/feeds', { schema: listFeedsSchema }, async () => ({ feeds: feeds.list().map(feedView) }));

  app.post<{ Body: { url: string; outlet?: string | null; intervalSeconds?: number } }>(
    '/api/feeds',
    { schema: addFeedSchema },
    async (req, reply) => {
      const f = await feeds.add(req.body);
      return reply.code(201).header('location', `/api/feeds/${f.id}`).send(feedView(f));
    },
  );

  app.patch<{ Params: { id: string }; Body: { paused?: boolean; intervalSeconds?: number; outlet?: string | null } }>(
    '/api/feeds/:id',
    { schema: changeFeedSchema },
    async (req) => feedView(await feeds.update(req.params.id, req.body)),
  );

  app.delete<{ Params: { id: string } }>('/api/feeds/:id', { schema: removeFeedSchema }, async (req, reply) => {
    if (!(await feeds.remove(req.params.id))) throw new StrandError('STRAND_NOT_FOUND', `no feed ${req.params.id}`);
    return reply.code(204).send();
  });
}

/** A feed as the API shows it: its settings and its health. */
export function feedView(f: FeedEntry): object {
  const s = f.state;
  const delay = median(s.delaysMs);
  return {
    id: f.id,
    url: f.url,
    outlet: f.outlet,
    intervalSeconds: f.intervalSeconds,
    paused: f.paused,
    origin: f.origin,
    added: f.added,
    health: {
      status: f.paused ? 'paused' : s.lastPollAt === null ? 'waiting' : s.failures > 0 ? 'failing' : 'ok',
      lastPollAt: s.lastPollAt,
      lastSuccessAt: s.lastSuccessAt,
      lastStatus: s.lastStatus,
      lastError: s.lastError,
      failures: s.failures,
      nextPollAt: s.nextPollAt,
      requests: s.requests,
      notModified: s.notModified,
      bytes: s.bytes,
      itemsSeen: s.itemsSeen,
      itemsNew: s.itemsNew,
      medianDelaySeconds: delay === null ? null : Math.round(delay / 1000),
    },
  };
}
