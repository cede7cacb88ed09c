import { describe, expect, it } from 'vitest';
import { type ItemContext, articleId, contentHash, toArticle } from '../../src/ingest/to-article.js';
import { parseFeedDate } from '../../src/ingest/parse-date.js';
import { isStrandError } from '../../src/errors.js';
import type { FeedItem } from '../../src/ingest/feed-item.js';

const ctx = { outlet: 'Harbourline Daily', source: 'feed.json', fetched: '2026-10-20T00:00:00.000Z', maxArticleChars: 1000 };
const item = (over: Partial<FeedItem>): FeedItem => ({
  guid: null,
  url: null,
  title: 'A title',
  published: null,
  html: null,
  text: null,
  language: null,
  ...over,
});

function code(fn: () => unknown): string | undefined {
  try {
    fn();
  } catch (err) {
    return isStrandError(err) ? err.code : 'not a StrandError';
  }
  return undefined;
}

describe('turning feed items into articles', () => {
  it('uses an absolute guid as the id and scopes a bare one to the outlet', () => {
    expect(articleId({ guid: 'urn:uuid:1225c695', url: null, published: null }, 'X', 't')).toBe('urn:uuid:1225c695');
    expect(articleId({ guid: 'item572', url: null, published: null }, 'Harbourline Daily', 't')).toBe('harbourline-daily:item572');
    expect(articleId({ guid: null, url: 'https://h.example/a', published: null }, 'X', 't')).toBe('https://h.example/a');
  });

  it('gives an item with no guid and no link the same id every time', () => {
    const a = toArticle(
      item({ title: 'Bridge shut', published: 'Mon, 12 Oct 2026 07:45:00 +0000', text: 'The bridge was shut.' }),
      ctx,
    ).article;
    const b = toArticle(
      item({ title: 'Bridge shut', published: 'Mon, 12 Oct 2026 07:45:00 +0000', text: 'The bridge was shut.' }),
      ctx,
    ).article;
    expect(a.id).toBe(b.id);
    expect(a.id).toMatch(/^harbourline-daily:[0-9a-f]{16}$/);
  });

  it('turns HTML into paragraphs of plain text, without scripts, styles or captions', () => {
    const a = toArticle(
      item({
        guid: 'g',
        html: '<p>One &amp; two.</p><script>alert(1)</script><figure><img src=x><figcaption>Photo: staff</figcaption></figure><p>Three <a href="https://x">four</a>.</p><style>p{}</style>',
      }),
      ctx,
    ).article;
    expect(a.text).toBe('One & two.\n\nThree four.');
  });

  it('normalises RFC 822 and RFC 3339 dates to UTC, and warns about unreadable ones', () => {
    expect(toArticle(item({ guid: 'g', text: 'x', published: 'Sat, 07 Sep 02 00:00:01 GMT' }), ctx).article.published).toBe(
      '2002-09-07T00:00:01.000Z',
    );
    expect(toArticle(item({ guid: 'g', text: 'x', published: '2003-12-13T18:30:02.25+01:00' }), ctx).article.published).toBe(
      '2003-12-13T17:30:02.250Z',
    );
    const r = toArticle(item({ guid: 'g', text: 'x', published: 'last Tuesday-ish' }), ctx);
    expect(r.article.published).toBeNull();
    expect(r.warning).toMatch(/unreadable date/);
  });

  it('uses the headline as the text of a title-only item', () => {
    expect(toArticle(item({ guid: 'g', title: 'Bridge collapses' }), ctx).article.text).toBe('Bridge collapses');
  });

  it('rejects an item with neither title nor body', () => {
    expect(code(() => toArticle(item({ guid: 'g', title: '', html: '<p> </p>' }), ctx))).toBe('STRAND_ARTICLE_EMPTY');
  });

  it('rejects a body over the size limit, before and after HTML conversion', () => {
    expect(code(() => toArticle(item({ guid: 'g', text: 'x'.repeat(1001) }), ctx))).toBe('STRAND_ARTICLE_TOO_LARGE');
    expect(code(() => toArticle(item({ guid: 'g', html: `<p>${'y'.repeat(10 * 1024 * 1024)}</p>` }), ctx))).toBe(
      'STRAND_ARTICLE_TOO_LARGE',
    );
  });

  it('hashes content with case and spacing folded, so re-wrapped copies match', () => {
    expect(contentHash('The  Bridge\nfell.')).toBe(contentHash('the bridge fell.'));
    expect(contentHash('The bridge fell.')).not.toBe(contentHash('The bridge stood.'));
  });
});

describe('publication dates out of range', () => {
  const fetched = '2026-12-03T12:00:00.000Z';
  const at = (published: string, over: Partial<ItemContext> = {}) =>
    toArticle(item({ guid: 'g', text: 'x', published }), { ...ctx, fetched, ...over });

  it('reads four-digit years as written: the year 0001 is not 2001 (RFC 2822 section 4.3 keeps two-digit years only for 00-99)', () => {
    expect(parseFeedDate('Mon, 01 Jan 0001 00:00:00 GMT')).toBe(Date.parse('0001-01-01T00:00:00Z'));
    expect(parseFeedDate('Sat, 07 Sep 49 00:00:01 GMT')).toBe(Date.parse('2049-09-07T00:00:01Z'));
    expect(parseFeedDate('Sat, 07 Sep 50 00:00:01 GMT')).toBe(Date.parse('1950-09-07T00:00:01Z'));
  });

  it('leaves a feed item dated a century or more before it was read undated, with a warning naming the date', () => {
    const r = at('Mon, 01 Jan 0001 00:00:00 GMT');
    expect(r.article.published).toBeNull();
    expect(r.warning).toBe(
      'date "Mon, 01 Jan 0001 00:00:00 GMT" is more than ingest.publishedPastDays (36500) days before it was fetched; publication time unknown',
    );
  });

  it('dates a feed item from the far future at the time it was read, with a warning', () => {
    for (const given of ['Fri, 31 Dec 9999 23:59:59 GMT', '9999-12-31T23:59:59Z', '2026-12-08T00:00:00Z']) {
      const r = at(given);
      expect(r.article.published).toBe(fetched);
      expect(r.warning).toMatch(/is more than ingest.publishedAheadHours \(48\) hours after it was fetched; the fetch time is used/);
    }
    // Within the allowance (a clock or zone error of a day) the date stands.
    expect(at('2026-12-04T12:00:00Z').article.published).toBe('2026-12-04T12:00:00.000Z');
  });

  it('takes the extended year +275760 (the last day JavaScript can hold) for no date at all', () => {
    const r = at('+275760-09-13T00:00:00Z');
    expect(r.article.published).toBeNull();
    expect(r.warning).toMatch(/unreadable date/);
  });

  it('refuses such dates outright when asked to (pushed items), saying why', () => {
    expect(() => at('0001-01-01T00:00:00Z', { strictDates: true })).toThrow(
      /published "0001-01-01T00:00:00Z" is more than ingest.publishedPastDays \(36500\) before now/,
    );
    expect(() => at('9999-12-31T00:00:00Z', { strictDates: true })).toThrow(/is more than ingest.publishedAheadHours \(48\) after now/);
    expect(() => at('soon', { strictDates: true })).toThrow(/published "soon" is not a date/);
  });
});
