/**
 * RSS 2.0 and Atom (RFC 4287) documents to ParsedFeed, with fast-xml-parser. Documents
 * that declare entities are refused outright: feeds have no need of them and they are the
 * vehicle of entity-expansion attacks.
 */
import { XMLParser, XMLValidator } from 'fast-xml-parser';
import { StrandError } from '../errors.js';
import type { FeedItem, ParsedFeed } from './feed-item.js';

const ALWAYS_ARRAY = new Set(['item', 'entry', 'link', 'category', 'author']);

const parser = new XMLParser({
  ignoreAttributes: false,
  attributeNamePrefix: '@_',
  textNodeName: '#text',
  parseTagValue: false,
  parseAttributeValue: false,
  trimValues: true,
  processEntities: true,
  htmlEntities: true,
  isArray: (name) => ALWAYS_ARRAY.has(name),
  // Atom text constructs are kept raw and read by their type (RFC 4287, 3.1): escaped
  // HTML, plain text, or an XHTML <div> whose markup is the content itself.
  stopNodes: ['feed.entry.content', 'feed.entry.summary'],
});

type Node = Record<string, unknown>;

/** Parses an XML feed document; throws STRAND_FEED_* errors with a reason. */
export function parseXmlFeed(xml: string): ParsedFeed {
  if (/<!ENTITY/i.test(xml)) throw new StrandError('STRAND_FEED_HOSTILE', 'XML entity declarations are not accepted in feeds');
  const valid = XMLValidator.validate(xml);
  if (valid !== true) {
    const e = valid.err;
    throw new StrandError('STRAND_FEED_MALFORMED', `malformed XML at line ${e.line}, column ${e.col}: ${e.msg}`);
  }
  let doc: Node;
  try {
    doc = parser.parse(xml) as Node;
  } catch (err) {
    throw new StrandError('STRAND_FEED_MALFORMED', `malformed XML: ${(err as Error).message}`, { cause: err });
  }
  if (isNode(doc.rss)) return rss(doc.rss);
  if (isNode(doc.feed)) return atom(doc.feed);
  if (isNode(doc['rdf:RDF'])) throw new StrandError('STRAND_FEED_UNKNOWN_FORMAT', 'RSS 1.0 (RDF) feeds are not supported yet');
  throw new StrandError('STRAND_FEED_UNKNOWN_FORMAT', 'XML document is neither RSS 2.0 (<rss>) nor Atom (<feed>)');
}

function rss(root: Node): ParsedFeed {
  const channel = root.channel;
  if (!isNode(channel)) throw new StrandError('STRAND_FEED_MALFORMED', 'RSS document has no <channel>');
  const language = text(channel.language);
  const items = asArray(channel.item)
    .filter(isNode)
    .map((item): FeedItem => {
      const guid = text(item.guid);
      const link = text(item.link);
      const encoded = text(item['content:encoded']);
      const description = text(item.description);
      return {
        guid,
        url: link ?? (guid && isPermalink(item.guid) ? guid : null),
        title: text(item.title) ?? '',
        published: text(item.pubDate) ?? text(item['dc:date']),
        html: encoded ?? description,
        text: null,
        language,
      };
    });
  return { format: 'rss', title: text(channel.title) ?? '', link: text(channel.link), language, items };
}

function atom(feed: Node): ParsedFeed {
  const language = attr(feed, 'xml:lang');
  const feedBase = attr(feed, 'xml:base');
  const items = asArray(feed.entry)
    .filter(isNode)
    .map((entry): FeedItem => {
      const content = first(entry.content) ?? first(entry.summary);
      const type = isNode(content) ? (attr(content, 'type') ?? 'text') : 'text';
      const raw = isNode(content) ? content['#text'] : content;
      const body = typeof raw === 'string' && raw.trim() !== '' ? (type === 'xhtml' ? unwrapXhtml(raw) : decodeXmlText(raw)) : null;
      const entryBase = attr(entry, 'xml:base');
      return {
        guid: text(entry.id),
        url: alternateLink(entry),
        title: text(entry.title) ?? '',
        published: text(entry.published) ?? text(entry.updated),
        html: type === 'html' || type === 'xhtml' ? body : null,
        text: type === 'html' || type === 'xhtml' ? null : body,
        language: attr(entry, 'xml:lang') ?? language,
        // xml:base nests: an entry's base is read against the feed's (RFC 4287, 2; XML Base).
        base: entryBase && feedBase ? joinBase(entryBase, feedBase) : (entryBase ?? feedBase),
      };
    });
  return { format: 'atom', title: text(feed.title) ?? '', link: alternateLink(feed), language, items };
}

/** The text of a raw (unparsed) element: CDATA sections kept as they are, character references decoded. */
function decodeXmlText(raw: string): string {
  return raw
    .split(/(<!\[CDATA\[[\s\S]*?\]\]>)/)
    .map((part) => (part.startsWith('<![CDATA[') ? part.slice(9, -3) : decodeReferences(part)))
    .join('')
    .trim();
}

const NAMED: Record<string, string> = { lt: '<', gt: '>', amp: '&', quot: '"', apos: "'" };

function decodeReferences(s: string): string {
  return s.replace(/&(#x[0-9a-f]+|#\d+|[a-z]+);/gi, (whole, ref: string) => {
    if (ref[0] !== '#') return NAMED[ref] ?? whole;
    const code = ref[1] === 'x' || ref[1] === 'X' ? parseInt(ref.slice(2), 16) : parseInt(ref.slice(1), 10);
    return code > 0 && code <= 0x10ffff ? String.fromCodePoint(code) : whole;
  });
}

/** XHTML content: the markup inside the wrapping <div> (RFC 4287, 3.1.1.3), as HTML. */
function unwrapXhtml(raw: string): string {
  const m = /^\s*<div\b[^>]*>([\s\S]*)<\/div>\s*$/i.exec(raw);
  return (m ? m[1]! : raw).trim();
}

function joinBase(relative: string, base: string): string {
  try {
    return new URL(relative, base).href;
  } catch {
    return relative;
  }
}

function alternateLink(node: Node): string | null {
  const links = asArray(node.link).filter(isNode);
  const alt = links.find((l) => (attr(l, 'rel') ?? 'alternate') === 'alternate') ?? links[0];
  return alt ? attr(alt, 'href') : null;
}

function isPermalink(guid: unknown): boolean {
  return !(isNode(guid) && attr(guid, 'isPermaLink') === 'false');
}

function isNode(v: unknown): v is Node {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function asArray(v: unknown): unknown[] {
  return v === undefined || v === null ? [] : Array.isArray(v) ? v : [v];
}

function first(v: unknown): unknown {
  return Array.isArray(v) ? v[0] : v;
}

function attr(node: Node, name: string): string | null {
  const v = node[`@_${name}`];
  return typeof v === 'string' && v.trim() !== '' ? v.trim() : null;
}

/** Text content of an element given as a string or as a node with attributes. */
function text(v: unknown): string | null {
  const f = first(v);
  if (typeof f === 'string') return f.trim() === '' ? null : f.trim();
  if (typeof f === 'number') return String(f);
  if (isNode(f)) {
    if ('#text' in f) return text(f['#text']);
    // xhtml content: a <div> child holding markup, already parsed; not kept structurally here.
    return null;
  }
  return null;
}
