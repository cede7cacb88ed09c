/** Sniffs a decoded feed document's format and hands it to the right parser. */
import { StrandError } from '../errors.js';
import type { ParsedFeed } from './feed-item.js';
import { parseJsonFeed } from './parse-json-feed.js';
import { parseXmlFeed } from './parse-xml-feed.js';

/** Parses RSS 2.0, Atom or JSON Feed text. */
export function parseFeed(text: string): ParsedFeed {
  const head = text.trimStart();
  if (head.startsWith('{')) return parseJsonFeed(head);
  if (head.startsWith('<')) return parseXmlFeed(head);
  if (head === '') throw new StrandError('STRAND_FEED_MALFORMED', 'the document is empty');
  throw new StrandError('STRAND_FEED_UNKNOWN_FORMAT', 'not a feed: neither XML nor JSON');
}
