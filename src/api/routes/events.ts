/** Routes: list events, one event with its mentions grouped by outlet and its timeline. */
import type { RoutePlugin } from '../route-plugin.js';
import { StrandError } from '../../errors.js';
import type { Corrections, EventMention, EventQueries } from '../../store/store.js';
import { CAUTION, dayOrTime, errorSchema, eventSummarySchema, int, mentionSchema, num, str, strings } from '../schemas.js';

/** GET /api/events */
const listEventsSchema = {
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
      participant: {
        type: 'string',
        maxLength: 200,
        description: 'Only events with a participant whose name holds these words (any case).',
      },
      place: { type: 'string', maxLength: 200, description: 'Only events with a place whose name holds these words (any case).' },
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
const getEventSchema = {
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
            properties: {
              day: str,
              mentions: {
                ...int,
                description: 'Sentences reporting the event that day (back-references not counted, as in mentionCount).',
              },
              newOutlets: strings,
            },
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
    308: { description: 'The event was merged into another; Location names it (not to be cached: a merge can be undone).', type: 'null' },
    404: errorSchema,
  },
} as const;

/** /api/events and /api/events/:id. */
export const eventRoutes: RoutePlugin<{ store: EventQueries & Pick<Corrections, 'listCorrections'> }> = async (app, { store }) => {
  app.get('/api/events', { schema: listEventsSchema }, async (req) => {
    const { q, ...filters } = req.query;
    return { ...(await store.listEvents({ ...filters, text: q })), caution: CAUTION };
  });

  app.get('/api/events/:id', { schema: getEventSchema }, async (req, reply) => {
    const detail = await store.getEvent(req.params.id);
    if (!detail) {
      // An event merged away (by consolidation or an analyst) now lives in another: send clients there.
      const into = (await store.mergedInto(req.params.id)) ?? (await mergedByAnalyst(store, req.params.id));
      // Not to be cached: an analyst can undo the merge.
      if (into) return reply.header('cache-control', 'no-store').redirect(`/api/events/${encodeURIComponent(into)}`, 308);
      throw new StrandError('STRAND_NOT_FOUND', `no event ${req.params.id}`);
    }
    return {
      event: detail.event,
      byOutlet: groupByOutlet(detail.mentions),
      timeline: timeline(detail.mentions),
      merges: detail.merges,
      splits: detail.splits,
      caution: CAUTION,
    };
  });
};

/** Mentions grouped by outlet, outlets in the order they first reported the event. */
export function groupByOutlet(mentions: readonly EventMention[]): { outlet: string; independent: boolean; mentions: EventMention[] }[] {
  const groups = new Map<string, EventMention[]>();
  for (const m of mentions) {
    const list = groups.get(m.outlet) ?? [];
    list.push(m);
    groups.set(m.outlet, list);
  }
  return [...groups].map(([outlet, ms]) => ({ outlet, independent: ms.some((m) => !m.isCopy), mentions: ms }));
}

/** Mentions per day, with the outlets that reported the event for the first time that day. */
export function timeline(mentions: readonly EventMention[]): { day: string; mentions: number; newOutlets: string[] }[] {
  const seen = new Set<string>();
  const days = new Map<string, { day: string; mentions: number; newOutlets: string[] }>();
  // Back-references point at the event without reporting it: not counted, as in mentionCount.
  for (const m of [...mentions].filter((x) => !x.evidence.refersBack).sort((a, b) => a.published.localeCompare(b.published))) {
    const day = m.published.slice(0, 10);
    const d = days.get(day) ?? { day, mentions: 0, newOutlets: [] };
    d.mentions++;
    if (!seen.has(m.outlet)) {
      seen.add(m.outlet);
      d.newOutlets.push(m.outlet);
    }
    days.set(day, d);
  }
  return [...days.values()];
}

/** Corrections read when looking for an analyst's merge of a missing event: bounds the search. */
const CORRECTIONS_SCANNED = 1000;

/** The event an analyst's standing merge moved this one into, among the latest corrections. */
async function mergedByAnalyst(store: Pick<Corrections, 'listCorrections'>, id: string): Promise<string | null> {
  const { corrections } = await store.listCorrections(CORRECTIONS_SCANNED, 0);
  return corrections.find((c) => c.kind === 'merge' && c.undoneBy === null && c.events[0] === id)?.events[1] ?? null;
}
