/**
 * Normalises one FeedItem into an Article: a stable id, plain text, an RFC 3339 date and
 * a content hash; or rejects it with a reason.
 */
import { createHash } from 'node:crypto';
import { StrandError } from '../errors.js';
import type { Article } from '../records.js';
import type { FeedItem } from './feed-item.js';
import { htmlToPlainText, normaliseText } from './html-to-plain-text.js';

/** Where an item came from and the limits that apply. */
export interface ItemContext {
  outlet: string;
  source: string;
  fetched: string;
  maxArticleChars: number;
  /** The URL relative links are read against when the item gives no base: the feed's own URL, else its site link. */
  documentUrl?: string | null;
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
  if (item.published) {
    const ms = parseDate(item.published);
    if (Number.isNaN(ms) || !calendarDateExists(item.published)) warning = `unreadable date "${item.published.slice(0, 60)}"; publication time unknown`;
    else published = new Date(ms).toISOString();
  }
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

/**
 * Milliseconds since the epoch of an RFC 822 / RFC 3339 date (and the usual variants
 * Date.parse reads), or NaN. A leap second (":60", allowed by RFC 3339, 5.7) is read as
 * the second after ":59".
 */
function parseDate(s: string): number {
  const leap = /(\d{2}:\d{2}):60(?=\D|$)/;
  if (!leap.test(s)) return Date.parse(s);
  const ms = Date.parse(s.replace(leap, '$1:59'));
  return Number.isNaN(ms) ? ms : ms + 1000;
}

const MONTHS = ['jan', 'feb', 'mar', 'apr', 'may', 'jun', 'jul', 'aug', 'sep', 'oct', 'nov', 'dec'];

/**
 * False for a date that names a day its month does not have ("31 Feb"), which Date.parse
 * would quietly roll into the next month. Reads the RFC 822 (day month year) and RFC 3339
 * (year-month-day) forms; other forms pass.
 */
export function calendarDateExists(s: string): boolean {
  const rfc822 = /(\d{1,2})[\s-]+([a-z]{3})[a-z]*\.?[\s-]+(\d{2,4})/i.exec(s);
  const rfc3339 = /^\s*(\d{4})-(\d{2})-(\d{2})/.exec(s);
  let y: number, m: number, d: number;
  if (rfc3339) [y, m, d] = [Number(rfc3339[1]), Number(rfc3339[2]), Number(rfc3339[3])];
  else if (rfc822) {
    const month = MONTHS.indexOf(rfc822[2]!.toLowerCase());
    if (month < 0) return true;
    [y, m, d] = [Number(rfc822[3]!.length === 2 ? `20${rfc822[3]}` : rfc822[3]), month + 1, Number(rfc822[1])];
  } else return true;
  return m >= 1 && m <= 12 && d >= 1 && d <= new Date(Date.UTC(y, m, 0)).getUTCDate();
}

/** SHA-256 of the text with case and whitespace folded, so re-wrapped copies hash alike. */
export function contentHash(text: string): string {
  return sha256(text.toLowerCase().replace(/\s+/g, ' ').trim());
}

/** A short, URL-safe key for an outlet name. */
export function outletKey(outlet: string): string {
  return outlet.toLowerCase().normalize('NFKD').replace(/[^a-z0-9]+/g, '-').replace(/^-|-$/g, '') || 'outlet';
}

function sha256(s: string): string {
  return createHash('sha256').update(s).digest('hex');
}

function tooLarge(length: number, ctx: ItemContext): StrandError {
  return new StrandError('STRAND_ARTICLE_TOO_LARGE', `article body of ${length} characters exceeds ingest.maxArticleChars (${ctx.maxArticleChars})`);
}
