/** JSON Feed 1.0/1.1 (jsonfeed.org) documents to ParsedFeed. */
import { StrandError } from '../errors.js';
import type { FeedItem, ParsedFeed } from './feed-item.js';

type Obj = Record<string, unknown>;

/** Parses a JSON Feed; throws STRAND_FEED_* errors with a reason. */
export function parseJsonFeed(json: string): ParsedFeed {
  let doc: unknown;
  try {
    doc = JSON.parse(json);
  } catch (err) {
    throw new StrandError('STRAND_FEED_MALFORMED', `malformed JSON: ${(err as Error).message}`, { cause: err });
  }
  if (!isObj(doc)) throw new StrandError('STRAND_FEED_MALFORMED', 'JSON Feed must be a JSON object');
  if (typeof doc.version !== 'string' || !doc.version.startsWith('https://jsonfeed.org/version/')) {
    throw new StrandError('STRAND_FEED_UNKNOWN_FORMAT', 'JSON document has no JSON Feed "version" (https://jsonfeed.org/version/1.1)');
  }
  if (!Array.isArray(doc.items)) throw new StrandError('STRAND_FEED_MALFORMED', 'JSON Feed has no "items" array');
  const language = str(doc.language);
  const items = doc.items.filter(isObj).map((item): FeedItem => ({
    // JSON Feed 1.1 says id is a string; 1.0 feeds sometimes send numbers.
    guid: str(item.id) ?? (typeof item.id === 'number' ? String(item.id) : null),
    url: str(item.url),
    title: str(item.title) ?? '',
    published: str(item.date_published) ?? str(item.date_modified),
    html: str(item.content_html),
    text: str(item.content_text) ?? str(item.summary),
    language: str(item.language) ?? language,
  }));
  return { format: 'jsonfeed', title: str(doc.title) ?? '', link: str(doc.home_page_url), language, items };
}

function isObj(v: unknown): v is Obj {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function str(v: unknown): string | null {
  return typeof v === 'string' && v.trim() !== '' ? v.trim() : null;
}
