/**
 * Full text for summary-only feeds: fetches the article's page (same address guard, redirect
 * limit, timeout and size cap as feeds) and extracts its body with Mozilla's Readability
 * (the algorithm of Firefox's Reader View) over a linkedom document; the body's HTML then
 * goes through the same HTML-to-text conversion as feed content (scripts, styles,
 * captions out).
 */
import { Readability } from '@mozilla/readability';
import { parseHTML } from 'linkedom';
import type { Agent } from 'undici';
import { StrandError } from '../errors.js';
import { decodeBytes } from './decode-bytes.js';
import { htmlToPlainText } from './html-to-plain-text.js';
import { type ReadLimits, fetchDocument } from './read-source.js';

/** Less text than this is not taken for an article body. */
const MIN_ARTICLE_CHARS = 200;

/** The article body found on a page, as plain text paragraphs; throws a StrandError when there is none. */
export async function fetchFullText(url: string, limits: ReadLimits, agent?: Agent): Promise<string> {
  const res = await fetchDocument(url, limits, { accept: 'text/html, application/xhtml+xml;q=0.9, */*;q=0.1' }, agent);
  if (res.status !== 200) throw new StrandError('STRAND_SOURCE_UNREADABLE', `${res.url} answered HTTP ${res.status}`);
  return extractArticleText(decodeBytes(res.bytes, res.charset).text, res.url);
}

/** The main text of an HTML page; throws STRAND_ARTICLE_EMPTY when Readability finds none. */
export function extractArticleText(html: string, url: string): string {
  let content: string | null | undefined;
  try {
    const { document } = parseHTML(html);
    content = new Readability(document as unknown as ConstructorParameters<typeof Readability>[0], { charThreshold: 200 }).parse()?.content;
  } catch (err) {
    throw new StrandError('STRAND_ARTICLE_EMPTY', `no article text found on ${url}: ${(err as Error).message}`, { cause: err });
  }
  const text = content ? htmlToPlainText(content) : '';
  // Readability always returns something; a few words are a menu or a notice, not an article.
  if (text.length < MIN_ARTICLE_CHARS)
    throw new StrandError('STRAND_ARTICLE_EMPTY', `no article text found on ${url} (${text.length} characters of text)`);
  return text;
}
