/** Routes: list stories, one story with its events, its articles by outlet and its timeline. */
import { StrandError } from '../../errors.js';
import type { LinkEvidence } from '../../records.js';
import type { EventSummary, StoryArticleRow, EventQueries, StoryDetail } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import {
  CAUTION,
  dayOrTime,
  errorSchema,
  evidenceSchema,
  eventSummarySchema,
  int,
  nullableStr,
  num,
  storySummarySchema,
  str,
  strings,
} from '../schemas.js';

/** GET /api/stories */
const listStoriesSchema = {
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
      participant: {
        type: 'string',
        maxLength: 200,
        description: 'Only stories with an event with a participant whose name holds these words (any case).',
      },
      place: {
        type: 'string',
        maxLength: 200,
        description: 'Only stories with an event with a place whose name holds these words (any case).',
      },
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
/** Events and articles of a story read for its cross-story links: bounds one request's work. */
const CROSS_LINK_SCAN = 300;

/** GET /api/stories/:id */
const getStorySchema = {
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
        splits: {
          type: 'array',
          description:
            'Splits this story took part in, oldest first: consolidation found that `articles` of the articles of `from` formed another thread, and moved them (with the events first reported in them) to the new story `into`. `score` is how alike the two parts were (below link.storySplitThreshold).',
          items: {
            type: 'object',
            properties: { from: str, into: str, articles: int, score: num, at: str },
            required: ['from', 'into', 'articles', 'score', 'at'],
          },
        },
        crossLinks: {
          type: 'array',
          description: `Links that cross this story's edge: a sentence of another story linked to one of its events (in), or one of its sentences linked to another story's event (out). Rare and worth checking, each with its score and evidence. Read from the story's first ${CROSS_LINK_SCAN} events and articles.`,
          items: {
            type: 'object',
            properties: {
              direction: { type: 'string', enum: ['in', 'out'] },
              eventId: str,
              eventLabel: str,
              articleId: str,
              articleTitle: str,
              outlet: str,
              sentence: int,
              text: nullableStr,
              score: num,
              evidence: evidenceSchema,
            },
            required: [
              'direction',
              'eventId',
              'eventLabel',
              'articleId',
              'articleTitle',
              'outlet',
              'sentence',
              'text',
              'score',
              'evidence',
            ],
          },
        },
        caution: str,
      },
      required: ['story', 'events', 'byOutlet', 'timeline', 'merges', 'splits', 'crossLinks', 'caution'],
    },
    308: { description: 'The story was merged into another; Location names it (not to be cached: a merge can be undone).', type: 'null' },
    404: errorSchema,
  },
} as const;

/** /api/stories and /api/stories/:id. */
export const storyRoutes: RoutePlugin<{ store: EventQueries }> = async (app, { store }) => {
  app.get('/api/stories', { schema: listStoriesSchema }, async (req) => {
    const { q, ...filters } = req.query;
    return { ...(await store.listStories({ ...filters, text: q })), caution: CAUTION };
  });

  app.get('/api/stories/:id', { schema: getStorySchema }, async (req, reply) => {
    const detail = await store.getStory(req.params.id);
    if (!detail) {
      // A story consolidation merged away now lives in another: send clients there.
      const into = await store.storyMergedInto(req.params.id);
      // Not to be cached: an analyst can undo the merge.
      if (into) return reply.header('cache-control', 'no-store').redirect(`/api/stories/${encodeURIComponent(into)}`, 308);
      throw new StrandError('STRAND_NOT_FOUND', `no story ${req.params.id}`);
    }
    return {
      story: detail.story,
      events: detail.events,
      byOutlet: articlesByOutlet(detail.articles),
      timeline: storyTimeline(detail.articles, detail.events),
      merges: detail.merges,
      splits: detail.splits,
      crossLinks: await crossLinks(store, detail),
      caution: CAUTION,
    };
  });
};

/** One link across a story's edge, as the story view lists it. */
export interface CrossLink {
  direction: 'in' | 'out';
  eventId: string;
  eventLabel: string;
  articleId: string;
  articleTitle: string;
  outlet: string;
  sentence: number;
  text: string | null;
  score: number;
  evidence: LinkEvidence;
}

/** The links into the story's events from other stories' sentences, and out of its sentences to other stories' events. */
async function crossLinks(store: EventQueries, detail: StoryDetail): Promise<CrossLink[]> {
  const found: CrossLink[] = [];
  for (const e of detail.events.slice(0, CROSS_LINK_SCAN)) {
    for (const m of (await store.getEvent(e.id))?.mentions ?? []) {
      if (!m.evidence.crossStory) continue;
      const { articleId, articleTitle, outlet, sentenceIndex: sentence, text, score, evidence } = m;
      found.push({ direction: 'in', eventId: e.id, eventLabel: e.label, articleId, articleTitle, outlet, sentence, text, score, evidence });
    }
  }
  for (const a of detail.articles.slice(0, CROSS_LINK_SCAN)) {
    for (const s of (await store.getArticle(a.id))?.sentences ?? []) {
      for (const l of s.links) {
        if (!l.evidence.crossStory) continue;
        const { eventId, eventLabel, score, evidence } = l;
        found.push({
          direction: 'out',
          eventId,
          eventLabel,
          articleId: a.id,
          articleTitle: a.title,
          outlet: a.outlet,
          sentence: s.index,
          text: s.text || null,
          score,
          evidence,
        });
      }
    }
  }
  return found;
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
