/**
 * JSON Schemas of the API's requests and responses. Fastify validates requests and
 * serialises responses with them, and @fastify/swagger turns them into the OpenAPI
 * document, so they are the single description of the API.
 */

const str = { type: 'string' } as const;
const nullableStr = { type: ['string', 'null'] } as const;
const num = { type: 'number' } as const;
const int = { type: 'integer' } as const;
const strings = { type: 'array', items: str } as const;

/** Shown with every answer that carries automatic links. */
export const CAUTION =
  'Links between sentences and events are machine suggestions and can be wrong, including about real people. Check the evidence and the sources before publishing or acting on them.';

/** Why a mention was linked. */
export const evidenceSchema = {
  type: 'object',
  description: 'Why the mention was linked: what an analyst needs to judge the link.',
  properties: {
    similarity: { ...num, description: 'Cosine similarity between the sentence and the event centroid.' },
    timeDecay: { ...num, description: 'Multiplier from the time gap: 1 same time, 0.5 one half-life apart.' },
    timeGapDays: { ...num, description: "Days between the sentence's time and the event's time span." },
    sharedParticipants: strings,
    sharedPlaces: strings,
    overlapBonus: { ...num, description: 'Score added for shared rare names.' },
    opened: { type: 'boolean', description: 'The mention opened this event.' },
    crossStory: {
      type: 'boolean',
      description:
        "The event belongs to another story than the sentence's article: such a link had to clear a higher bar (link.crossStoryMargin). These links across stories are the rarest and the most worth checking.",
    },
    sizeFactor: { ...num, description: 'How much the number of sentences the event already holds raised the score (link.sizePrior).' },
    sameArticleFactor: {
      ...num,
      description: "The share of the score kept because the sentence's own article opened the event (link.sameArticleFactor).",
    },
  },
  required: ['similarity', 'timeDecay', 'timeGapDays', 'sharedParticipants', 'sharedPlaces', 'overlapBonus', 'opened'],
} as const;

const timeSchema = { type: 'object', properties: { text: str, start: str, end: str }, required: ['text', 'start', 'end'] } as const;

/** An event as listed. */
export const eventSummarySchema = {
  type: 'object',
  properties: {
    id: str,
    label: { ...str, description: 'Short summary drawn from a mention.' },
    firstSeen: { ...str, format: 'date-time' },
    lastSeen: { ...str, format: 'date-time' },
    timeStart: { ...str, format: 'date', description: 'Earliest day the mentions place the event on.' },
    timeEnd: { ...str, format: 'date' },
    participants: strings,
    places: strings,
    outlets: strings,
    independentOutlets: { ...int, description: 'Outlets with a mention that is not a verbatim copy of another outlet.' },
    mentionCount: int,
    version: int,
    story: {
      ...nullableStr,
      description:
        'The story the event lives in (that of the article that opened it, after story merges); null for events from before stories were kept.',
    },
  },
  required: [
    'id',
    'label',
    'firstSeen',
    'lastSeen',
    'timeStart',
    'timeEnd',
    'participants',
    'places',
    'outlets',
    'independentOutlets',
    'mentionCount',
    'version',
    'story',
  ],
} as const;

/** A story as listed. */
export const storySummarySchema = {
  type: 'object',
  description:
    'A story: an ongoing thread of coverage that articles join by their whole text, names and time (an automatic grouping, a suggestion like every link).',
  properties: {
    id: str,
    label: { ...str, description: 'The headline of the article that opened the story.' },
    firstSeen: { ...str, format: 'date-time' },
    lastSeen: { ...str, format: 'date-time' },
    articleCount: int,
    eventCount: int,
    outlets: strings,
    independentOutlets: { ...int, description: "Outlets with an article that is not a copy of another outlet's." },
    names: { ...strings, description: 'People, organisations and places the articles name most often.' },
    version: int,
  },
  required: ['id', 'label', 'firstSeen', 'lastSeen', 'articleCount', 'eventCount', 'outlets', 'independentOutlets', 'names', 'version'],
} as const;

const mentionSchema = {
  type: 'object',
  properties: {
    articleId: str,
    articleTitle: str,
    articleUrl: nullableStr,
    published: str,
    isCopy: { type: 'boolean' },
    sentenceIndex: int,
    text: { ...nullableStr, description: 'Null once the retention policy has erased the text.' },
    score: { ...num, description: 'Link score in [0, 1].' },
    rank: { ...int, description: '0 for the sentence’s best link.' },
    evidence: evidenceSchema,
    times: { type: 'array', items: timeSchema },
  },
  required: [
    'articleId',
    'articleTitle',
    'articleUrl',
    'published',
    'isCopy',
    'sentenceIndex',
    'text',
    'score',
    'rank',
    'evidence',
    'times',
  ],
} as const;

const errorSchema = {
  type: 'object',
  properties: { error: { type: 'object', properties: { code: str, message: str }, required: ['code', 'message'] } },
  required: ['error'],
} as const;

const dayOrTime = { type: 'string', pattern: '^\\d{4}-\\d{2}-\\d{2}(T[0-9:.]+(Z|[+-]\\d{2}:\\d{2}))?$' } as const;

/** GET /api/events */
export const listEventsSchema = {
  summary: 'List events',
  description: 'Events, most recently active first unless sorted otherwise.',
  tags: ['events'],
  querystring: {
    type: 'object',
    additionalProperties: false,
    properties: {
      from: { ...dayOrTime, description: 'Only events active on or after this day or time.' },
      to: { ...dayOrTime, description: 'Only events active on or before this day or time.' },
      outlet: { type: 'string', maxLength: 200, description: 'Only events this outlet reported.' },
      q: { type: 'string', maxLength: 200, description: 'Words that must appear in the label or a sentence.' },
      minOutlets: { type: 'integer', minimum: 1, maximum: 1000 },
      story: { type: 'string', maxLength: 100, description: 'Only events of this story.' },
      sort: { type: 'string', enum: ['recent', 'outlets', 'mentions'], default: 'recent' },
      limit: { type: 'integer', minimum: 1, maximum: 200, default: 50 },
      offset: { type: 'integer', minimum: 0, maximum: 1_000_000, default: 0 },
    },
  },
  response: {
    200: {
      type: 'object',
      properties: { total: int, events: { type: 'array', items: eventSummarySchema }, caution: str },
      required: ['total', 'events', 'caution'],
    },
    400: errorSchema,
  },
} as const;

/** GET /api/events/:id */
export const getEventSchema = {
  summary: 'One event with its mentions by outlet and its timeline',
  tags: ['events'],
  params: { type: 'object', properties: { id: { type: 'string', maxLength: 100 } }, required: ['id'] },
  response: {
    200: {
      type: 'object',
      properties: {
        event: eventSummarySchema,
        byOutlet: {
          type: 'array',
          items: {
            type: 'object',
            properties: { outlet: str, independent: { type: 'boolean' }, mentions: { type: 'array', items: mentionSchema } },
            required: ['outlet', 'independent', 'mentions'],
          },
        },
        timeline: {
          type: 'array',
          items: {
            type: 'object',
            properties: { day: str, mentions: int, newOutlets: strings },
            required: ['day', 'mentions', 'newOutlets'],
          },
        },
        merges: {
          type: 'array',
          description: 'Events that consolidation found to be this one and merged into it.',
          items: { type: 'object', properties: { from: str, into: str, score: num, at: str }, required: ['from', 'into', 'score', 'at'] },
        },
        splits: {
          type: 'array',
          description:
            'Splits this event took part in: consolidation found that part of its mentions (`mentions` of them) report another happening and moved them from `from` to the new event `into`. `score` is how alike the two parts were (centroid cosine x time decay), below the split threshold. A suggestion, like every link.',
          items: {
            type: 'object',
            properties: { from: str, into: str, mentions: int, score: num, at: str },
            required: ['from', 'into', 'mentions', 'score', 'at'],
          },
        },
        caution: str,
      },
      required: ['event', 'byOutlet', 'timeline', 'merges', 'splits', 'caution'],
    },
    308: { description: 'The event was merged into another; Location names it.', type: 'null' },
    404: errorSchema,
  },
} as const;

/** GET /api/stories */
export const listStoriesSchema = {
  summary: 'List stories',
  description: 'Stories (threads of coverage above events), most recently active first unless sorted otherwise.',
  tags: ['stories'],
  querystring: {
    type: 'object',
    additionalProperties: false,
    properties: {
      from: { ...dayOrTime, description: 'Only stories active on or after this day or time.' },
      to: { ...dayOrTime, description: 'Only stories that began on or before this day or time.' },
      outlet: { type: 'string', maxLength: 200, description: 'Only stories this outlet reported on.' },
      q: { type: 'string', maxLength: 200, description: 'Words that must appear in the label, a headline or a name.' },
      minOutlets: { type: 'integer', minimum: 1, maximum: 1000 },
      sort: { type: 'string', enum: ['recent', 'outlets', 'articles'], default: 'recent' },
      limit: { type: 'integer', minimum: 1, maximum: 200, default: 50 },
      offset: { type: 'integer', minimum: 0, maximum: 1_000_000, default: 0 },
    },
  },
  response: {
    200: {
      type: 'object',
      properties: { total: int, stories: { type: 'array', items: storySummarySchema }, caution: str },
      required: ['total', 'stories', 'caution'],
    },
    400: errorSchema,
  },
} as const;

/** GET /api/stories/:id */
export const getStorySchema = {
  summary: 'One story with its events, its articles by outlet and its timeline',
  tags: ['stories'],
  params: { type: 'object', properties: { id: { type: 'string', maxLength: 100 } }, required: ['id'] },
  response: {
    200: {
      type: 'object',
      properties: {
        story: storySummarySchema,
        events: { type: 'array', description: 'Its events, earliest first.', items: eventSummarySchema },
        byOutlet: {
          type: 'array',
          description: 'Its articles grouped by outlet, outlets in the order they first reported on the story.',
          items: {
            type: 'object',
            properties: {
              outlet: str,
              independent: { type: 'boolean' },
              articles: {
                type: 'array',
                items: {
                  type: 'object',
                  properties: { id: str, title: str, url: nullableStr, published: nullableStr, duplicateOf: nullableStr },
                  required: ['id', 'title', 'url', 'published', 'duplicateOf'],
                },
              },
            },
            required: ['outlet', 'independent', 'articles'],
          },
        },
        timeline: {
          type: 'array',
          description:
            'Articles per day, with the outlets reporting on the story for the first time that day and the events that opened that day.',
          items: {
            type: 'object',
            properties: { day: str, articles: int, newOutlets: strings, newEvents: strings },
            required: ['day', 'articles', 'newOutlets', 'newEvents'],
          },
        },
        merges: {
          type: 'array',
          description: 'Stories that consolidation found to be this one and merged into it.',
          items: { type: 'object', properties: { from: str, into: str, score: num, at: str }, required: ['from', 'into', 'score', 'at'] },
        },
        caution: str,
      },
      required: ['story', 'events', 'byOutlet', 'timeline', 'merges', 'caution'],
    },
    308: { description: 'The story was merged into another; Location names it.', type: 'null' },
    404: errorSchema,
  },
} as const;

/** GET /api/articles/:id */
export const getArticleSchema = {
  summary: 'One article with its sentences and their links',
  description: 'The id is the article id, URL-encoded (ids are often URLs).',
  tags: ['articles'],
  params: { type: 'object', properties: { id: { type: 'string', maxLength: 2048 } }, required: ['id'] },
  response: {
    200: {
      type: 'object',
      properties: {
        article: {
          type: 'object',
          properties: {
            id: str,
            outlet: str,
            url: nullableStr,
            title: str,
            published: nullableStr,
            fetched: str,
            language: nullableStr,
            text: nullableStr,
            contentHash: str,
            duplicateOf: {
              ...nullableStr,
              description:
                'The earlier article this one copies (a syndicated copy, verbatim or lightly edited), or null. A copy still counts as its outlet reporting the event, but not as independent confirmation.',
            },
            copySimilarity: {
              type: ['number', 'null'],
              description:
                'For a copy: 1 when verbatim, else the estimated Jaccard similarity of the two texts (4-word shingles, MinHash). Null when not a copy.',
            },
            source: str,
            story: { ...nullableStr, description: 'The story the article joined (an automatic grouping), or null.' },
          },
          required: [
            'id',
            'outlet',
            'url',
            'title',
            'published',
            'fetched',
            'language',
            'text',
            'contentHash',
            'duplicateOf',
            'source',
            'story',
          ],
        },
        sentences: {
          type: 'array',
          items: {
            type: 'object',
            properties: {
              index: int,
              text: str,
              start: int,
              end: int,
              eventness: num,
              isMention: { type: 'boolean' },
              links: {
                type: 'array',
                items: {
                  type: 'object',
                  properties: { eventId: str, eventLabel: str, score: num, rank: int, evidence: evidenceSchema },
                  required: ['eventId', 'eventLabel', 'score', 'rank', 'evidence'],
                },
              },
            },
            required: ['index', 'text', 'start', 'end', 'eventness', 'isMention', 'links'],
          },
        },
        caution: str,
      },
      required: ['article', 'sentences', 'caution'],
    },
    404: errorSchema,
  },
} as const;

/** GET /api/outlets */
export const listOutletsSchema = {
  summary: 'Outlets and their article counts',
  tags: ['articles'],
  response: {
    200: {
      type: 'object',
      properties: {
        outlets: { type: 'array', items: { type: 'object', properties: { outlet: str, articles: int }, required: ['outlet', 'articles'] } },
      },
      required: ['outlets'],
    },
  },
} as const;

/** GET /api/health */
export const healthSchema = {
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
          properties: { articles: int, sentences: int, mentions: int, links: int, events: int },
          required: ['articles', 'sentences', 'mentions', 'links', 'events'],
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

/** ?limit=1..500 (default 100), for the operator lists. */
const limitQuery = {
  type: 'object',
  additionalProperties: false,
  properties: { limit: { type: 'integer', minimum: 1, maximum: 500, default: 100 } },
} as const;

/** GET /api/webhooks/dead-letters */
export const deadLettersSchema = {
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

export const queueSchema = {
  summary: 'Work waiting in a scale-out deployment: articles for the workers, analysed articles for the linker, dead letters',
  tags: ['operations'],
  response: {
    200: { type: 'object', properties: { intake: int, analysed: int, deadLetters: int }, required: ['intake', 'analysed', 'deadLetters'] },
  },
} as const;

export const queueDeadLettersSchema = {
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

export const pushSchema = {
  summary:
    'Push articles: one JSON object, a JSON array, or NDJSON (application/x-ndjson), each {id, outlet, title, url?, published?, text? or html?, language?}',
  description:
    'Each item is checked on its own: accepted (queued for processing), duplicate (already stored, or twice in the request) or rejected with its reason. Accepted articles are processed in the order received; their links appear under /api/articles/{id} once processed.',
  tags: ['articles'],
  response: {
    200: {
      type: 'object',
      properties: {
        accepted: int,
        duplicates: int,
        rejected: int,
        results: {
          type: 'array',
          items: {
            type: 'object',
            properties: {
              index: int,
              id: nullableStr,
              status: { type: 'string', enum: ['accepted', 'duplicate', 'rejected'] },
              reason: nullableStr,
            },
            required: ['index', 'id', 'status', 'reason'],
          },
        },
      },
      required: ['accepted', 'duplicates', 'rejected', 'results'],
    },
  },
} as const;

/** A polled feed with its health. */
export const feedSchema = {
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

const feedParams = { type: 'object', properties: { id: { type: 'string', pattern: '^fd_[0-9a-f]{16}$' } }, required: ['id'] } as const;
const intervalSchema = { type: 'integer', minimum: 30, maximum: 86_400 } as const;

export const listFeedsSchema = {
  summary: 'The polled feeds with their health',
  tags: ['feeds'],
  response: { 200: { type: 'object', properties: { feeds: { type: 'array', items: feedSchema } }, required: ['feeds'] } },
} as const;

export const addFeedSchema = {
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

export const changeFeedSchema = {
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

export const removeFeedSchema = {
  summary: 'Stop polling a feed (articles already stored stay)',
  tags: ['feeds'],
  params: feedParams,
  response: { 204: { type: 'null' }, 404: errorSchema },
} as const;
