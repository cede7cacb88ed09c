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
    const ms = Date.parse(item.published);
    if (Number.isNaN(ms)) warning = `unreadable date "${item.published.slice(0, 60)}"; publication time unknown`;
    else published = new Date(ms).toISOString();
  }
  return {
    article: {
      id: articleId(item, ctx.outlet, title),
      outlet: ctx.outlet,
      url: item.url,
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
  if (item.url) return item.url;
  return `${outletKey(outlet)}:${sha256(`${title}\n${item.published ?? ''}`).slice(0, 16)}`;
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
