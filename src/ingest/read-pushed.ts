/**
 * Articles pushed to the API: one JSON object, a JSON array of them, or NDJSON (one object
 * per line). Each item is checked on its own and either becomes an Article (through the
 * same normalisation as feed items) or is rejected with its reason; a bad item never
 * spoils the others.
 *
 * Pushed item (our format): {"id", "outlet", "title", "url"?, "published"? (RFC 3339),
 * "text"? (plain) or "html"?, "language"?}.
 */
import { z } from 'zod';
import { StrandError, describeError } from '../errors.js';
import type { Article } from '../records.js';
import { toArticle } from './to-article.js';
import { parseJsonText } from './parse-json-text.js';

const pushedItemSchema = z.strictObject({
  id: z.string().trim().min(1).max(2048),
  outlet: z.string().trim().min(1).max(200),
  title: z.string().max(2000),
  url: z
    .url({ protocol: /^https?$/ })
    .max(4096)
    .nullish(),
  published: z.string().max(64).nullish(),
  text: z.string().nullish(),
  html: z.string().nullish(),
  language: z.string().max(35).nullish(),
});

/** What became of one pushed item before processing. */
export type PushedItem =
  { index: number; article: Article; error?: undefined } | { index: number; id: string | null; article?: undefined; error: StrandError };

/** Limits and provenance for pushed items. */
export interface PushContext {
  maxArticleChars: number;
  fetched: string;
  source: string;
  /** The window of publication dates taken (ingest.publishedPastDays, ingest.publishedAheadHours). */
  publishedPastDays?: number;
  publishedAheadHours?: number;
}

/** Splits a request body into items: an object, an array of objects, or NDJSON lines. */
export function splitPushedBody(body: unknown, ndjson: boolean, maxItems: number): unknown[] {
  let items: unknown[];
  if (ndjson) {
    if (typeof body !== 'string') throw new StrandError('STRAND_REQUEST_INVALID', 'an NDJSON body must be text');
    items = body
      .split('\n')
      .map((line, i) => ({ line: line.trim(), i }))
      .filter((l) => l.line !== '')
      .map(({ line, i }) => {
        try {
          return parseJsonText(line, `line ${i + 1}`);
        } catch (err) {
          return new StrandError('STRAND_ARTICLE_INVALID', (err as Error).message, { cause: err });
        }
      });
  } else {
    items = Array.isArray(body) ? body : [body];
  }
  if (items.length === 0) throw new StrandError('STRAND_REQUEST_INVALID', 'the body holds no article');
  if (items.length > maxItems)
    throw new StrandError('STRAND_REQUEST_INVALID', `${items.length} articles in one request; at most ingest.maxPushItems (${maxItems})`);
  return items;
}

/** Checks and normalises each item. */
export function readPushedItems(items: readonly unknown[], ctx: PushContext): PushedItem[] {
  return items.map((raw, index): PushedItem => {
    if (raw instanceof StrandError) return { index, id: null, error: raw };
    const id =
      raw && typeof raw === 'object' && typeof (raw as { id?: unknown }).id === 'string' ? (raw as { id: string }).id.slice(0, 2048) : null;
    const parsed = pushedItemSchema.safeParse(raw);
    if (!parsed.success) {
      const why = parsed.error.issues
        .slice(0, 5)
        .map((i) => `${i.path.join('.') || '(item)'}: ${i.message}`)
        .join('; ');
      return { index, id, error: new StrandError('STRAND_ARTICLE_INVALID', `not an article: ${why}`) };
    }
    const p = parsed.data;
    try {
      const { article } = toArticle(
        {
          guid: p.id,
          url: p.url ?? null,
          title: p.title,
          published: p.published ?? null,
          html: p.html ?? null,
          text: p.text ?? null,
          language: p.language ?? null,
        },
        // A pushing system is told of a bad date rather than having it repaired.
        {
          outlet: p.outlet,
          source: ctx.source,
          fetched: ctx.fetched,
          maxArticleChars: ctx.maxArticleChars,
          strictDates: true,
          ...(ctx.publishedPastDays ? { publishedPastDays: ctx.publishedPastDays } : {}),
          ...(ctx.publishedAheadHours !== undefined ? { publishedAheadHours: ctx.publishedAheadHours } : {}),
        },
      );
      return { index, article };
    } catch (err) {
      return {
        index,
        id,
        error: err instanceof StrandError ? err : new StrandError('STRAND_ARTICLE_INVALID', describeError(err), { cause: err }),
      };
    }
  });
}
