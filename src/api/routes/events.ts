/** Routes: list events, one event with its mentions grouped by outlet and its timeline. */
import type { FastifyInstance } from 'fastify';
import { StrandError } from '../../errors.js';
import type { EventMention, EventQueries } from '../../store/store.js';
import { CAUTION, getEventSchema, listEventsSchema } from '../schemas.js';

interface ListQuery {
  from?: string;
  to?: string;
  outlet?: string;
  q?: string;
  minOutlets?: number;
  story?: string;
  sort?: 'recent' | 'outlets' | 'mentions';
  limit: number;
  offset: number;
}

/** Registers /api/events and /api/events/:id. */
export function registerEventRoutes(app: FastifyInstance, store: EventQueries): void {
  app.get<{ Querystring: ListQuery }>('/api/events', { schema: listEventsSchema }, async (req) => {
    const q = req.query;
    const page = await store.listEvents({
      from: q.from,
      to: q.to,
      outlet: q.outlet,
      text: q.q,
      minOutlets: q.minOutlets,
      story: q.story,
      sort: q.sort,
      limit: q.limit,
      offset: q.offset,
    });
    return { ...page, caution: CAUTION };
  });

  app.get<{ Params: { id: string } }>('/api/events/:id', { schema: getEventSchema }, async (req, reply) => {
    const detail = await store.getEvent(req.params.id);
    if (!detail) {
      // An event consolidation merged away now lives in another: send clients there.
      const into = await store.mergedInto(req.params.id);
      if (into) return reply.redirect(`/api/events/${encodeURIComponent(into)}`, 308);
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
}

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
  for (const m of [...mentions].sort((a, b) => a.published.localeCompare(b.published))) {
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
