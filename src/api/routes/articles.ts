/** Routes: one article with its sentences and their links; the outlets list. */
import { StrandError } from '../../errors.js';
import type { EventQueries } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { CAUTION, errorSchema, evidenceSchema, int, nullableStr, num, str } from '../schemas.js';

/** GET /api/articles/:id */
const getArticleSchema = {
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
const listOutletsSchema = {
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

/** /api/articles/:id and /api/outlets. */
export const articleRoutes: RoutePlugin<{ store: EventQueries }> = async (app, { store }) => {
  app.get('/api/articles/:id', { schema: getArticleSchema }, async (req) => {
    const detail = await store.getArticle(req.params.id);
    if (!detail) throw new StrandError('STRAND_NOT_FOUND', `no article ${req.params.id}`);
    return { ...detail, caution: CAUTION };
  });

  app.get('/api/outlets', { schema: listOutletsSchema }, async () => ({ outlets: await store.listOutlets() }));
};
