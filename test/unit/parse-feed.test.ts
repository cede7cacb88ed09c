import { describe, expect, it } from 'vitest';
import { parseFeed } from '../../src/ingest/parse-feed.js';
import { isStrandError } from '../../src/errors.js';
import { toArticle } from '../../src/ingest/to-article.js';

// Atom: the example document of RFC 4287, section 1.1 (from memory).
const RFC4287_EXAMPLE = `<?xml version="1.0" encoding="utf-8"?>
<feed xmlns="http://www.w3.org/2005/Atom">
  <title>Example Feed</title>
  <link href="http://example.org/"/>
  <updated>2003-12-13T18:30:02Z</updated>
  <author>
    <name>John Doe</name>
  </author>
  <id>urn:uuid:60a76c80-d399-11d9-b93C-0003939e0af6</id>
  <entry>
    <title>Atom-Powered Robots Run Amok</title>
    <link href="http://example.org/2003/12/13/atom03"/>
    <id>urn:uuid:1225c695-cfb8-4ebb-aaaa-80da344efa6a</id>
    <updated>2003-12-13T18:30:02Z</updated>
    <summary>Some text.</summary>
  </entry>
</feed>`;

// JSON Feed 1.1: the example feed of the specification (jsonfeed.org/version/1.1; from memory).
const JSONFEED_EXAMPLE = `{
  "version": "https://jsonfeed.org/version/1.1",
  "title": "My Example Feed",
  "home_page_url": "https://example.org/",
  "feed_url": "https://example.org/feed.json",
  "items": [
    { "id": "2", "content_text": "This is a second item.", "url": "https://example.org/second-item" },
    { "id": "1", "content_html": "<p>Hello, world!</p>", "url": "https://example.org/initial-post" }
  ]
}`;

// RSS 2.0: channel with the three required elements; an item needs only a title or a
// description; RFC 822 dates with two- or four-digit years (RSS 2.0 specification, RSS
// Advisory Board; checks.md).
const RSS_EXAMPLE = `<?xml version="1.0"?>
<rss version="2.0" xmlns:content="http://purl.org/rss/1.0/modules/content/">
  <channel>
    <title>Liftoff News</title>
    <link>http://liftoff.msfc.nasa.gov/</link>
    <description>Liftoff to Space Exploration.</description>
    <item>
      <title>Star City</title>
      <link>http://liftoff.msfc.nasa.gov/news/2003/news-starcity.asp</link>
      <description>How do Americans get ready to work with Russians aboard the International Space Station?</description>
      <pubDate>Tue, 03 Jun 2003 09:39:21 GMT</pubDate>
      <guid>http://liftoff.msfc.nasa.gov/2003/06/03.html#item573</guid>
    </item>
    <item>
      <description>Sky watchers in Europe, Asia, and parts of Alaska and Canada will experience a partial eclipse of the Sun.</description>
      <pubDate>Sat, 07 Sep 02 00:00:01 GMT</pubDate>
      <guid isPermaLink="false">item572</guid>
    </item>
    <item>
      <title>Full text</title>
      <description>Short summary.</description>
      <content:encoded><![CDATA[<p>The full body.</p>]]></content:encoded>
    </item>
  </channel>
</rss>`;

describe('reading feeds', () => {
  it('reads the RFC 4287 example Atom document', () => {
    const f = parseFeed(RFC4287_EXAMPLE);
    expect(f.format).toBe('atom');
    expect(f.title).toBe('Example Feed');
    expect(f.items).toEqual([
      {
        guid: 'urn:uuid:1225c695-cfb8-4ebb-aaaa-80da344efa6a',
        url: 'http://example.org/2003/12/13/atom03',
        title: 'Atom-Powered Robots Run Amok',
        published: '2003-12-13T18:30:02Z',
        html: null,
        text: 'Some text.',
        language: null,
        base: null,
      },
    ]);
  });

  it('reads the JSON Feed 1.1 example, HTML and text bodies alike', () => {
    const f = parseFeed(JSONFEED_EXAMPLE);
    expect(f.format).toBe('jsonfeed');
    expect(f.items.map((i) => [i.guid, i.text, i.html])).toEqual([
      ['2', 'This is a second item.', null],
      ['1', null, '<p>Hello, world!</p>'],
    ]);
  });

  it('reads RSS 2.0 items with a title or only a description, and prefers content:encoded', () => {
    const f = parseFeed(RSS_EXAMPLE);
    expect(f.format).toBe('rss');
    expect(f.title).toBe('Liftoff News');
    expect(f.items[0]!.published).toBe('Tue, 03 Jun 2003 09:39:21 GMT');
    expect(f.items[1]!.title).toBe('');
    expect(f.items[1]!.guid).toBe('item572');
    expect(f.items[1]!.url).toBeNull();
    expect(f.items[2]!.html).toBe('<p>The full body.</p>');
  });

  it('reads Atom html content as HTML', () => {
    const f = parseFeed(`<feed xmlns="http://www.w3.org/2005/Atom"><title>T</title><id>x</id><updated>2026-01-01T00:00:00Z</updated>
      <entry><id>e1</id><title>E</title><updated>2026-01-01T00:00:00Z</updated><content type="html">&lt;p&gt;Hi &amp;amp; bye&lt;/p&gt;</content></entry></feed>`);
    expect(f.items[0]!.html).toBe('<p>Hi &amp; bye</p>');
  });

  it.each([
    ['an empty document', '', 'STRAND_FEED_MALFORMED'],
    ['plain text', 'hello', 'STRAND_FEED_UNKNOWN_FORMAT'],
    ['broken XML', '<rss><channel><title>x</channel></rss>', 'STRAND_FEED_MALFORMED'],
    ['an unknown XML root', '<html><body/></html>', 'STRAND_FEED_UNKNOWN_FORMAT'],
    ['RSS without a channel', '<rss version="2.0"></rss>', 'STRAND_FEED_MALFORMED'],
    ['broken JSON', '{"version": ', 'STRAND_FEED_MALFORMED'],
    ['JSON that is not a JSON Feed', '{"title": "x", "items": []}', 'STRAND_FEED_UNKNOWN_FORMAT'],
    ['a JSON Feed without items', '{"version": "https://jsonfeed.org/version/1.1", "title": "x"}', 'STRAND_FEED_MALFORMED'],
    [
      'an entity-expansion attack',
      '<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol"><!ENTITY lol2 "&lol;&lol;&lol;">]><rss><channel><title>&lol2;</title></channel></rss>',
      'STRAND_FEED_HOSTILE',
    ],
    [
      'an external entity',
      '<?xml version="1.0"?><!DOCTYPE x [<!ENTITY xxe SYSTEM "file:///etc/passwd">]><rss><channel><title>&xxe;</title></channel></rss>',
      'STRAND_FEED_HOSTILE',
    ],
  ])('refuses %s with a clear reason', (_name, text, code) => {
    let caught: unknown;
    try {
      parseFeed(text);
    } catch (err) {
      caught = err;
    }
    expect(isStrandError(caught, code as never)).toBe(true);
    expect((caught as Error).message.length).toBeGreaterThan(5);
  });
});

describe('feed extensions and links (conformance)', () => {
  const ctx = {
    outlet: 'O',
    source: 'https://feeds.example/news/rss.xml',
    fetched: '2026-01-01T00:00:00.000Z',
    maxArticleChars: 10_000,
    documentUrl: 'https://feeds.example/news/rss.xml',
  };

  it('reads Atom xhtml content as the markup inside its div (RFC 4287, 3.1.1.3)', () => {
    const f = parseFeed(`<feed xmlns="http://www.w3.org/2005/Atom"><title>T</title><id>x</id><updated>2026-01-01T00:00:00Z</updated>
      <entry><id>e1</id><title>E</title><updated>2026-01-01T00:00:00Z</updated>
      <content type="xhtml"><div xmlns="http://www.w3.org/1999/xhtml"><p>Hello <b>there</b> &amp; more</p></div></content></entry></feed>`);
    expect(f.items[0]!.html).toBe('<p>Hello <b>there</b> &amp; more</p>');
    expect(toArticle(f.items[0]!, ctx).article.text).toBe('Hello there & more');
  });

  it('keeps CDATA and decodes character references in Atom text and html content', () => {
    const f = parseFeed(`<feed xmlns="http://www.w3.org/2005/Atom"><title>T</title><id>x</id><updated>2026-01-01T00:00:00Z</updated>
      <entry><id>e1</id><title>E</title><updated>2026-01-01T00:00:00Z</updated><summary><![CDATA[Fish & chips <cheap>]]> &#233;t&#xE9;</summary></entry></feed>`);
    expect(f.items[0]!.text).toBe('Fish & chips <cheap> été');
  });

  it('resolves relative links against nested xml:base, then the feed URL (RFC 4287 section 2, RFC 3986 section 5)', () => {
    const f =
      parseFeed(`<feed xmlns="http://www.w3.org/2005/Atom" xml:base="https://ledger.example/blog/"><title>T</title><id>x</id><updated>2026-01-01T00:00:00Z</updated>
      <entry xml:base="posts/"><id>e1</id><title>E</title><updated>2026-01-01T00:00:00Z</updated><link href="one.html"/></entry>
      <entry><id>e2</id><title>F</title><updated>2026-01-01T00:00:00Z</updated><link href="/two.html"/></entry></feed>`);
    expect(f.items.map((i) => toArticle(i, ctx).article.url)).toEqual([
      'https://ledger.example/blog/posts/one.html',
      'https://ledger.example/two.html',
    ]);
    const rss = parseFeed(
      `<rss version="2.0"><channel><title>C</title><link>https://c.example/</link><description>d</description><item><title>A</title><link>../a/1</link></item></channel></rss>`,
    );
    const a = toArticle(rss.items[0]!, ctx).article;
    expect(a.url).toBe('https://feeds.example/a/1');
    expect(a.id).toBe('https://feeds.example/a/1');
  });

  it('drops links that are not http(s), so the page never shows a script link', () => {
    const rss = parseFeed(`<rss version="2.0"><channel><title>C</title><link>https://c.example/</link><description>d</description>
      <item><title>A</title><link>javascript:alert(1)</link><guid isPermaLink="false">a1</guid></item></channel></rss>`);
    const r = toArticle(rss.items[0]!, ctx);
    expect(r.article.url).toBeNull();
    expect(r.warning).toMatch(/not an http\(s\) URL/);
    expect(r.article.id).toBe('o:a1');
  });

  it('reads the Dublin Core date of an RSS item (dc:date, W3C-DTF)', () => {
    const f =
      parseFeed(`<rss version="2.0" xmlns:dc="http://purl.org/dc/elements/1.1/"><channel><title>C</title><link>https://c.example/</link><description>d</description>
      <item><title>A</title><dc:date>2002-09-07T00:00:01+02:00</dc:date></item></channel></rss>`);
    expect(toArticle(f.items[0]!, ctx).article.published).toBe('2002-09-06T22:00:01.000Z');
  });

  it.each([
    // RSS 2.0 specification (RSS Advisory Board), pubDate example; checks.md.
    ['Sat, 07 Sep 2002 00:00:01 GMT', '2002-09-07T00:00:01.000Z'],
    // RFC 822 section 5: two-digit years, numeric and named zones (from memory).
    ['Sat, 07 Sep 02 00:00:01 GMT', '2002-09-07T00:00:01.000Z'],
    ['Sat, 7 Sep 2002 00:00:01 +0200', '2002-09-06T22:00:01.000Z'],
    ['Sat, 07 Sep 2002 00:00:01 EST', '2002-09-07T05:00:01.000Z'],
    // RFC 3339 section 5.8, its examples (from memory).
    ['1985-04-12T23:20:50.52Z', '1985-04-12T23:20:50.520Z'],
    ['1996-12-19T16:39:57-08:00', '1996-12-20T00:39:57.000Z'],
    ['1990-12-31T23:59:60Z', '1991-01-01T00:00:00.000Z'],
    ['1937-01-01T12:00:27.87+00:20', '1937-01-01T11:40:27.870Z'],
    // The usual broken variants (common practice): no weekday, lower case, no seconds, no time, a space for the T.
    ['07 Sep 2002 00:00:01 GMT', '2002-09-07T00:00:01.000Z'],
    ['sat, 07 sep 2002 00:00:01 gmt', '2002-09-07T00:00:01.000Z'],
    ['Sat, 07 Sep 2002 00:00 GMT', '2002-09-07T00:00:00.000Z'],
    ['Sat, 07 Sep 2002', '2002-09-07T00:00:00.000Z'],
    ['2002-09-07 00:00:01', '2002-09-07T00:00:01.000Z'],
  ])('normalises the date %s to %s', (given, expected) => {
    expect(
      toArticle({ guid: 'g', url: null, title: 't', published: given, html: null, text: 'x', language: null }, ctx).article.published,
    ).toBe(expected);
  });

  it.each(['Sat, 31 Feb 2002 00:00:01 GMT', '2002-02-30T10:00:00Z', 'yesterday', '2002-13-01T00:00:00Z'])(
    'warns about the impossible or unreadable date %s and keeps the item undated',
    (given) => {
      const r = toArticle({ guid: 'g', url: null, title: 't', published: given, html: null, text: 'x', language: null }, ctx);
      expect(r.article.published).toBeNull();
      expect(r.warning).toMatch(/unreadable date/);
    },
  );
});
