/**
 * Normalises one FeedItem into an Article: a stable id, plain text, an RFC 3339 date and
 * a content hash; or rejects it with a reason.
 */
import { createHash } from 'node:crypto';
import { StrandError } from '../errors.js';
import type { Article } from '../records.js';
import type { FeedItem } from './feed-item.js';
import { htmlToPlainText, normaliseText } from './html-to-plain-text.js';
import { parseFeedDate } from './parse-date.js';

/** Where an item came from and the limits that apply. */
export interface ItemContext {
  outlet: string;
  source: string;
  fetched: string;
  maxArticleChars: number;
  /** The URL relative links are read against when the item gives no base: the feed's own URL, else its site link. */
  documentUrl?: string | null;
  /** Publication dates accepted: from this many days before `fetched` (default 36,500, a century)... */
  publishedPastDays?: number;
  /** ...to this many hours after it (default 48: clocks and time zones err). */
  publishedAheadHours?: number;
  /** Refuse an item whose date is unreadable or out of range (pushed items), instead of repairing it with a warning (feed items). */
  strictDates?: boolean;
}

/** An Article, plus a note for the operator when something was repaired on the way. */
export interface ArticleResult {
  article: Article;
  warning: string | null;
}

const SCHEME = /^[a-z][a-z0-9+.-]*:/i;

/** Builds the Article for one item; throws STRAND_ARTICLE_* errors for unusable items. */
export function toArticle(item: FeedItem, ctx: ItemContext): ArticleResult {
  const title = normaliseText(item.title).replace(/\n+/g, ' ');
  // Measure the raw body first: converting a 10 MB document only to reject it wastes time.
  const rawLength = (item.html ?? item.text ?? '').length;
  if (rawLength > ctx.maxArticleChars * 4) throw tooLarge(rawLength, ctx);
  let text = item.html !== null ? htmlToPlainText(item.html) : item.text !== null ? normaliseText(item.text) : '';
  // A title-only item (allowed by RSS 2.0) is a one-sentence article: its headline.
  if (text === '') text = title;
  if (text === '') throw new StrandError('STRAND_ARTICLE_EMPTY', `item ${item.guid ?? item.url ?? '(no id)'} has neither title nor body`);
  if (text.length > ctx.maxArticleChars) throw tooLarge(text.length, ctx);

  let warning: string | null = null;
  let published: string | null = null;
  if (item.published) ({ published, warning } = publicationDate(item.published, ctx));
  const url = item.url ? resolveUrl(item.url, item.base ?? null, ctx.documentUrl ?? null) : null;
  if (item.url && !url) warning = [warning, `link "${item.url.slice(0, 80)}" is not an http(s) URL; dropped`].filter(Boolean).join('; ');
  return {
    article: {
      id: articleId({ ...item, url }, ctx.outlet, title),
      outlet: ctx.outlet,
      url,
      title,
      published,
      fetched: ctx.fetched,
      language: item.language,
      text,
      contentHash: contentHash(text),
      duplicateOf: null,
      source: ctx.source,
    },
    warning,
  };
}

/**
 * An item's publication date as RFC 3339 UTC, judged against the fetch time: an unreadable
 * date leaves it unknown; one more than `publishedPastDays` before the fetch (year 0001)
 * is unknown too, and one more than `publishedAheadHours` after it (year 9999) becomes the
 * fetch time, so that it cannot sit at the top of every list for ever. Each repair is a
 * warning naming the date given; with `strictDates` it is a refusal instead.
 */
function publicationDate(given: string, ctx: ItemContext): { published: string | null; warning: string | null } {
  const shown = `"${given.slice(0, 60)}"`;
  const ms = parseFeedDate(given);
  const refuse = (why: string): never => {
    throw new StrandError('STRAND_ARTICLE_INVALID', `published ${shown} ${why}`);
  };
  if (Number.isNaN(ms)) {
    if (ctx.strictDates) refuse('is not a date (RFC 3339, e.g. 2026-10-05T09:30:00Z)');
    return { published: null, warning: `unreadable date ${shown}; publication time unknown` };
  }
  const fetched = Date.parse(ctx.fetched);
  const pastDays = ctx.publishedPastDays ?? 36_500;
  const aheadHours = ctx.publishedAheadHours ?? 48;
  if (ms < fetched - pastDays * 86_400_000) {
    if (ctx.strictDates) refuse(`is more than ingest.publishedPastDays (${pastDays}) before now`);
    return {
      published: null,
      warning: `date ${shown} is more than ingest.publishedPastDays (${pastDays}) days before it was fetched; publication time unknown`,
    };
  }
  if (ms > fetched + aheadHours * 3_600_000) {
    if (ctx.strictDates) refuse(`is more than ingest.publishedAheadHours (${aheadHours}) after now`);
    return {
      published: ctx.fetched,
      warning: `date ${shown} is more than ingest.publishedAheadHours (${aheadHours}) hours after it was fetched; the fetch time is used`,
    };
  }
  return { published: new Date(ms).toISOString(), warning: null };
}

/** Stable article id: absolute guids are globally unique by the feed standards; others are scoped to the outlet. */
export function articleId(item: Pick<FeedItem, 'guid' | 'url' | 'published'>, outlet: string, title: string): string {
  if (item.guid) return SCHEME.test(item.guid) ? item.guid : `${outletKey(outlet)}:${item.guid}`;
  if (item.url) return SCHEME.test(item.url) ? item.url : `${outletKey(outlet)}:${item.url}`;
  return `${outletKey(outlet)}:${sha256(`${title}\n${item.published ?? ''}`).slice(0, 16)}`;
}

/**
 * An item's link as an absolute http(s) URL: read against the item's base (Atom xml:base)
 * and the document's URL (RFC 3986, 5); anything else (javascript:, data:, a relative link
 * with nothing to read it against) is dropped, since the page shows links as they are.
 */
export function resolveUrl(link: string, base: string | null, documentUrl: string | null): string | null {
  try {
    const doc = documentUrl && /^https?:/i.test(documentUrl) ? new URL(documentUrl) : undefined;
    const scope = base ? new URL(base, doc) : doc;
    const u = new URL(link.trim(), scope);
    return u.protocol === 'http:' || u.protocol === 'https:' ? u.href : null;
  } catch {
    return null;
  }
}

/** SHA-256 of the text with case and whitespace folded, so re-wrapped copies hash alike. */
export function contentHash(text: string): string {
  return sha256(text.toLowerCase().replace(/\s+/g, ' ').trim());
}

/** A short, URL-safe key for an outlet name. */
export function outletKey(outlet: string): string {
  return (
    outlet
      .toLowerCase()
      .normalize('NFKD')
      .replace(/[^a-z0-9]+/g, '-')
      .replace(/^-|-$/g, '') || 'outlet'
  );
}

function sha256(s: string): string {
  return createHash('sha256').update(s).digest('hex');
}

function tooLarge(length: number, ctx: ItemContext): StrandError {
  return new StrandError(
    'STRAND_ARTICLE_TOO_LARGE',
    `article body of ${length} characters exceeds ingest.maxArticleChars (${ctx.maxArticleChars})`,
  );
}
