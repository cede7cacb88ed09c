/** POST /api/articles: articles pushed by another system, one JSON object, a JSON array or NDJSON. */
import { readPushedItems, splitPushedBody } from '../../ingest/read-pushed.js';
import type { Article } from '../../records.js';
import type { ArticleLog } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { int, nullableStr } from '../schemas.js';
import { canonicalUrl } from '../../ingest/canonical-url.js';

const pushSchema = {
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

const url = (a: Article): string | null => canonicalUrl(a.url);

/** Hands accepted articles on (to the local pipeline, or to the Redis intake stream). */
export type SubmitArticles = (articles: readonly Article[]) => Promise<void>;

/** Limits of the push route. */
export interface PushLimits {
  maxArticleChars: number;
  maxPushItems: number;
  maxPushBytes: number;
  publishedPastDays?: number;
  publishedAheadHours?: number;
}

/** One item's result. */
interface ItemResult {
  index: number;
  id: string | null;
  status: 'accepted' | 'duplicate' | 'rejected';
  reason: string | null;
}

/** What the push route needs. */
export interface PushDeps {
  store: Pick<ArticleLog, 'hasArticle' | 'findByUrl'>;
  submit: SubmitArticles;
  limits: PushLimits;
  now: () => Date;
}

/** POST /api/articles. */
export const pushRoute: RoutePlugin<PushDeps> = async (app, deps) => {
  const { limits } = deps;
  app.addContentTypeParser('application/x-ndjson', { parseAs: 'string', bodyLimit: limits.maxPushBytes }, (_req, body, done) =>
    done(null, body),
  );
  app.post('/api/articles', { schema: pushSchema, bodyLimit: limits.maxPushBytes }, async (req) => {
    const ndjson = (req.headers['content-type'] ?? '').startsWith('application/x-ndjson');
    const items = readPushedItems(splitPushedBody(req.body, ndjson, limits.maxPushItems), {
      maxArticleChars: limits.maxArticleChars,
      fetched: deps.now().toISOString(),
      source: `push:${req.ip}`,
      ...(limits.publishedPastDays ? { publishedPastDays: limits.publishedPastDays } : {}),
      ...(limits.publishedAheadHours !== undefined ? { publishedAheadHours: limits.publishedAheadHours } : {}),
    });
    const results: ItemResult[] = [];
    const accepted: Article[] = [];
    const seen = new Set<string>();
    for (const item of items) {
      if (item.error) {
        results.push({ index: item.index, id: item.id, status: 'rejected', reason: `${item.error.code}: ${item.error.message}` });
      } else if (seen.has(item.article.id) || (await deps.store.hasArticle(item.article.id))) {
        results.push({
          index: item.index,
          id: item.article.id,
          status: 'duplicate',
          reason: seen.has(item.article.id) ? 'earlier in this request' : 'already stored',
        });
      } else if (url(item.article) && (seen.has(url(item.article)!) || (await deps.store.findByUrl(url(item.article)!)))) {
        results.push({
          index: item.index,
          id: item.article.id,
          status: 'duplicate',
          reason: seen.has(url(item.article)!) ? 'same URL earlier in this request' : 'an article with the same URL is stored',
        });
      } else {
        seen.add(item.article.id);
        if (url(item.article)) seen.add(url(item.article)!);
        accepted.push(item.article);
        results.push({ index: item.index, id: item.article.id, status: 'accepted', reason: null });
      }
    }
    if (accepted.length) await deps.submit(accepted);
    const count = (s: ItemResult['status']) => results.filter((r) => r.status === s).length;
    return { accepted: count('accepted'), duplicates: count('duplicate'), rejected: count('rejected'), results };
  });
};
