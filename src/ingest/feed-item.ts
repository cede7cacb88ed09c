/** The shape every feed parser produces, before normalisation into an Article. */

/** One item of a feed, as the source gave it. */
export interface FeedItem {
  /** guid (RSS), id (Atom, JSON Feed); null when absent. */
  guid: string | null;
  url: string | null;
  title: string;
  /** Raw date string as found (normalised later). */
  published: string | null;
  /** Body as HTML when the source gives HTML. */
  html: string | null;
  /** Body as plain text when the source gives plain text. */
  text: string | null;
  language: string | null;
  /** The base URI in scope for the item's relative URLs (Atom xml:base), or null: the document's URL then. */
  base?: string | null;
}

/** Which format a feed was read as. */
export type FeedFormat = 'rss' | 'atom' | 'jsonfeed';

/** A parsed feed. */
export interface ParsedFeed {
  format: FeedFormat;
  title: string;
  link: string | null;
  language: string | null;
  items: FeedItem[];
}
