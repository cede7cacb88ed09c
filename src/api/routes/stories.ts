/** Routes: list stories, one story with its events, its articles by outlet and its timeline. */
import type { FastifyInstance } from 'fastify';
import { StrandError } from '../../errors.js';
import type { EventSummary, StoryArticleRow, EventQueries } from '../../store/store.js';
import { CAUTION, getStorySchema, listStoriesSchema } from '../schemas.js';

interface ListQuery {
  from?: string;
  to?: string;
  outlet?: string;
  q?: string;
  minOutlets?: number;
  sort?: 'recent' | 'outlets' | 'articles';
  limit: number;
  offset: number;
}

/** Registers /api/stories and /api/stories/:id. */
export function registerStoryRoutes(app: FastifyInstance, store: EventQueries): void {
  app.get<{ Querystring: ListQuery }>('/api/stories', { schema: listStoriesSchema }, async (req) => {
    const q = req.query;
    const page = await store.listStories({
      from: q.from,
      to: q.to,
      outlet: q.outlet,
      text: q.q,
      minOutlets: q.minOutlets,
      sort: q.sort,
      limit: q.limit,
      offset: q.offset,
    });
    return { ...page, caution: CAUTION };
  });

  app.get<{ Params: { id: string } }>('/api/stories/:id', { schema: getStorySchema }, async (req, reply) => {
    const detail = await store.getStory(req.params.id);
    if (!detail) {
      // A story consolidation merged away now lives in another: send clients there.
      const into = await store.storyMergedInto(req.params.id);
      if (into) return reply.redirect(`/api/stories/${encodeURIComponent(into)}`, 308);
      throw new StrandError('STRAND_NOT_FOUND', `no story ${req.params.id}`);
    }
    return {
      story: detail.story,
      events: detail.events,
      byOutlet: articlesByOutlet(detail.articles),
      timeline: storyTimeline(detail.articles, detail.events),
      merges: detail.merges,
      caution: CAUTION,
    };
  });
}

/** Articles grouped by outlet, outlets in the order they first reported on the story. */
export function articlesByOutlet(
  articles: readonly StoryArticleRow[],
): { outlet: string; independent: boolean; articles: Omit<StoryArticleRow, 'outlet'>[] }[] {
  const groups = new Map<string, StoryArticleRow[]>();
  for (const a of articles) groups.set(a.outlet, [...(groups.get(a.outlet) ?? []), a]);
  return [...groups].map(([outlet, list]) => ({
    outlet,
    independent: list.some((a) => a.duplicateOf === null),
    articles: list.map(({ outlet: _, ...rest }) => rest),
  }));
}

/** Articles per day, the outlets new to the story that day, and the events that opened that day. */
export function storyTimeline(
  articles: readonly StoryArticleRow[],
  events: readonly EventSummary[],
): { day: string; articles: number; newOutlets: string[]; newEvents: string[] }[] {
  const seen = new Set<string>();
  const days = new Map<string, { day: string; articles: number; newOutlets: string[]; newEvents: string[] }>();
  const day = (d: string) => days.get(d) ?? days.set(d, { day: d, articles: 0, newOutlets: [], newEvents: [] }).get(d)!;
  for (const a of articles) {
    if (!a.published) continue;
    const d = day(a.published.slice(0, 10));
    d.articles++;
    if (!seen.has(a.outlet)) {
      seen.add(a.outlet);
      d.newOutlets.push(a.outlet);
    }
  }
  for (const e of events) day(e.firstSeen.slice(0, 10)).newEvents.push(e.id);
  return [...days.values()].sort((a, b) => a.day.localeCompare(b.day));
}
