/** The polled feeds: list with health, add, pause/resume/change, remove. */
import { StrandError } from '../../errors.js';
import type { FeedPoller } from '../../poll/feed-poller.js';
import { median } from '../../poll/schedule.js';
import type { FeedEntry } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { errorSchema, int, nullableStr, str } from '../schemas.js';

/** What the routes need of the poller. */
export type FeedControl = Pick<FeedPoller, 'list' | 'add' | 'update' | 'remove'>;

const feedParams = { type: 'object', properties: { id: { type: 'string', pattern: '^fd_[0-9a-f]{16}$' } }, required: ['id'] } as const;
const intervalSchema = { type: 'integer', minimum: 30, maximum: 86_400 } as const;

/** A polled feed with its health. */
const feedSchema = {
  type: 'object',
  properties: {
    id: str,
    url: str,
    outlet: { ...nullableStr, description: "Outlet name used instead of the feed's title, or null." },
    intervalSeconds: int,
    paused: { type: 'boolean' },
    origin: {
      type: 'string',
      enum: ['config', 'api'],
      description: 'config: listed in the configuration file (kept in line with it at each start); api: added here.',
    },
    added: str,
    health: {
      type: 'object',
      properties: {
        status: {
          type: 'string',
          enum: ['waiting', 'ok', 'failing', 'paused'],
          description: 'waiting: not polled yet; failing: the last poll failed.',
        },
        lastPollAt: nullableStr,
        lastSuccessAt: nullableStr,
        lastStatus: { type: ['integer', 'null'], description: 'HTTP status of the last answer.' },
        lastError: nullableStr,
        failures: { ...int, description: 'Failed polls in a row.' },
        nextPollAt: str,
        requests: int,
        notModified: { ...int, description: 'Polls answered 304 Not Modified (nothing fetched or parsed).' },
        bytes: { ...int, description: 'Body bytes received.' },
        itemsSeen: { ...int, description: 'Items read, counting an item again each time the feed lists it.' },
        itemsNew: { ...int, description: 'Items not stored before, handed to the pipeline.' },
        medianDelaySeconds: { type: ['number', 'null'], description: 'Median time from publication to ingest of the latest new items.' },
      },
      required: [
        'status',
        'lastPollAt',
        'lastSuccessAt',
        'lastStatus',
        'lastError',
        'failures',
        'nextPollAt',
        'requests',
        'notModified',
        'bytes',
        'itemsSeen',
        'itemsNew',
        'medianDelaySeconds',
      ],
    },
  },
  required: ['id', 'url', 'outlet', 'intervalSeconds', 'paused', 'origin', 'added', 'health'],
} as const;
const listFeedsSchema = {
  summary: 'The polled feeds with their health',
  tags: ['feeds'],
  response: { 200: { type: 'object', properties: { feeds: { type: 'array', items: feedSchema } }, required: ['feeds'] } },
} as const;
const addFeedSchema = {
  summary: 'Start polling a feed (RSS 2.0, Atom or JSON Feed); it is polled at once',
  description:
    'Refused with 409 when the feed is already polled or poll.maxFeeds is reached, with 403 when its address is on a loopback, private or link-local network (unless ingest.allowPrivateNetworks).',
  tags: ['feeds'],
  body: {
    type: 'object',
    additionalProperties: false,
    properties: {
      url: { type: 'string', minLength: 1, maxLength: 2048 },
      outlet: { type: ['string', 'null'], minLength: 1, maxLength: 200 },
      intervalSeconds: intervalSchema,
    },
    required: ['url'],
  },
  response: { 201: feedSchema, 400: errorSchema, 403: errorSchema, 409: errorSchema },
} as const;
const changeFeedSchema = {
  summary: 'Pause or resume a feed, or change its interval or outlet name',
  tags: ['feeds'],
  params: feedParams,
  body: {
    type: 'object',
    additionalProperties: false,
    minProperties: 1,
    properties: {
      paused: { type: 'boolean' },
      intervalSeconds: intervalSchema,
      outlet: { type: ['string', 'null'], minLength: 1, maxLength: 200 },
    },
  },
  response: { 200: feedSchema, 404: errorSchema },
} as const;
const removeFeedSchema = {
  summary: 'Stop polling a feed (articles already stored stay)',
  tags: ['feeds'],
  params: feedParams,
  response: { 204: { type: 'null' }, 404: errorSchema },
} as const;

/** /api/feeds and /api/feeds/:id. */
export const feedRoutes: RoutePlugin<{ feeds: FeedControl }> = async (app, { feeds }) => {
  app.get('/api/feeds', { schema: listFeedsSchema }, async () => ({ feeds: feeds.list().map(feedView) }));

  app.post('/api/feeds', { schema: addFeedSchema }, async (req, reply) => {
    const f = await feeds.add(req.body);
    return reply.code(201).header('location', `/api/feeds/${f.id}`).send(feedView(f));
  });

  app.patch('/api/feeds/:id', { schema: changeFeedSchema }, async (req) => feedView(await feeds.update(req.params.id, req.body)));

  app.delete('/api/feeds/:id', { schema: removeFeedSchema }, async (req, reply) => {
    if (!(await feeds.remove(req.params.id))) throw new StrandError('STRAND_NOT_FOUND', `no feed ${req.params.id}`);
    return reply.code(204).send();
  });
};

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
