/**
 * Property-based fuzzing of every way articles come in: feed documents (as read from a file
 * or a poll) and pushed payloads. Thousands of malformed and hostile inputs, built by
 * fast-check from valid documents and from nothing: no input may crash or hang ingest,
 * reject without a reason, or lose what was accepted before.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../src/api/build-app.js';
import { parseFeedBytes } from '../../src/ingest/read-source.js';
import { LocalIntake } from '../../src/local-intake.js';
import { createLogger } from '../../src/logger.js';
import type { Runtime } from '../../src/runtime.js';
import { testConfig, testRuntime } from '../helpers/runtime.js';

const RSS = `<?xml version="1.0" encoding="UTF-8"?><rss version="2.0" xmlns:content="http://purl.org/rss/1.0/modules/content/" xmlns:dc="http://purl.org/dc/elements/1.1/"><channel><title>Vellmouth Courier</title><link>https://courier.example/</link><description>News</description><item><title>Levee breach floods Dunvessel</title><link>https://courier.example/a1</link><guid>https://courier.example/a1</guid><pubDate>Sat, 07 Sep 2002 00:00:01 GMT</pubDate><content:encoded><![CDATA[<p>The levee failed on Friday.</p><script>alert(1)</script>]]></content:encoded></item><item><title>Pier strike</title><link>/a2</link><dc:date>2002-09-08T10:00:00Z</dc:date><description>Dockworkers walked out.</description></item></channel></rss>`;
const ATOM = `<?xml version="1.0" encoding="utf-8"?><feed xmlns="http://www.w3.org/2005/Atom" xml:base="https://ledger.example/"><title>Harbour Ledger</title><id>urn:uuid:60a76c80-d399-11d9-b93c-0003939e0af6</id><updated>2003-12-13T18:30:02Z</updated><entry><title>Crane collapse</title><link href="news/1"/><id>urn:uuid:1225c695-cfb8-4ebb-aaaa-80da344efa6a</id><updated>2003-12-13T18:30:02Z</updated><content type="html">&lt;p&gt;A crane fell at the Korrin pier.&lt;/p&gt;</content></entry></feed>`;
const JSON_FEED = JSON.stringify({
  version: 'https://jsonfeed.org/version/1.1',
  title: 'Korrin Evening Post',
  home_page_url: 'https://post.example/',
  items: [
    {
      id: '1',
      url: 'https://post.example/1',
      title: 'Ferry delayed',
      content_text: 'The ferry was delayed on Monday.',
      date_published: '2010-02-07T14:04:00-05:00',
    },
  ],
});
const BASES = [RSS, ATOM, JSON_FEED];

const HOSTILE = [
  '<!DOCTYPE r [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;"><!ENTITY c "&b;&b;&b;&b;&b;&b;&b;&b;&b;&b;">]>',
  '<!DOCTYPE r [<!ENTITY x SYSTEM "file:///etc/passwd">]>',
  '&x;',
  '&c;',
  '<![CDATA[',
  ']]>',
  '<!--',
  '\u0000',
  '\uFFFE',
  '\uD800',
  '<script>while(1){}</script>',
  '<?xml version="1.0" encoding="windows-1252"?>',
  '<?xml version="1.0" encoding="x-unknown"?>',
  '"version":',
  '{"items":[',
  '"items":null',
  '<item>',
  '</channel>',
  '<entry>',
  'xml:base="javascript:alert(1)"',
  'href="data:text/html,x"',
  `<title>${'x'.repeat(5000)}</title>`,
  '<'.repeat(2000),
  '{'.repeat(2000),
  '['.repeat(3000),
];

/** A document made from a valid one by cutting, inserting and replacing pieces, or from nothing. */
const hostileDocument = fc.oneof(
  {
    weight: 3,
    arbitrary: fc
      .tuple(
        fc.constantFrom(...BASES),
        fc.array(
          fc.tuple(fc.nat(), fc.nat({ max: 40 }), fc.oneof(fc.constantFrom(...HOSTILE), fc.string({ unit: 'binary', maxLength: 40 }))),
          { maxLength: 6 },
        ),
      )
      .map(([base, edits]) =>
        edits.reduce((doc, [at, cut, piece]) => {
          const i = at % (doc.length + 1);
          return doc.slice(0, i) + piece + doc.slice(i + cut);
        }, base),
      ),
  },
  { weight: 1, arbitrary: fc.tuple(fc.constantFrom(...BASES), fc.nat()).map(([base, at]) => base.slice(0, at % base.length)) },
  { weight: 1, arbitrary: fc.string({ unit: 'binary', maxLength: 300 }) },
  { weight: 1, arbitrary: fc.jsonValue({ maxDepth: 4 }).map((v) => JSON.stringify(v)) },
);

describe('ingest under fuzzing', () => {
  it('parses thousands of malformed and hostile feed documents without crashing, every problem with a code and a reason', () => {
    const limits = { maxArticleChars: 2000 };
    fc.assert(
      fc.property(hostileDocument, fc.constantFrom(null, 'utf-8', 'iso-8859-1', 'windows-1252', 'x-bogus'), (text, charset) => {
        const doc = parseFeedBytes('fuzz', Buffer.from(text, 'utf8'), charset, limits, () => new Date('2026-10-01T00:00:00Z'));
        for (const p of doc.problems) {
          expect(p.code).toMatch(/^STRAND_[A-Z_]+$/);
          expect(p.message.length).toBeGreaterThan(0);
        }
        for (const a of doc.articles) {
          expect(a.id.length).toBeGreaterThan(0);
          expect(a.text.length).toBeLessThanOrEqual(limits.maxArticleChars);
          expect(a.published === null || !Number.isNaN(Date.parse(a.published))).toBe(true);
        }
      }),
      { numRuns: 3000, seed: 20261203 },
    );
  });

  it('parses thousands of random byte strings the same way', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 400 }), (bytes) => {
        const doc = parseFeedBytes('fuzz', bytes, null, { maxArticleChars: 2000 });
        expect(doc.articles.length + doc.problems.length).toBeGreaterThan(0);
      }),
      { numRuns: 2000, seed: 7 },
    );
  });

  describe('pushed payloads', () => {
    let rt: Runtime;
    let app: FastifyInstance;
    let intake: LocalIntake;
    const unhandled: unknown[] = [];
    const onUnhandled = (err: unknown) => unhandled.push(err);

    beforeAll(async () => {
      process.on('unhandledRejection', onUnhandled);
      rt = await testRuntime();
      intake = new LocalIntake(rt);
      app = await buildApp({
        store: rt.store,
        logger: createLogger('silent'),
        version: 'test',
        ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
        push: { submit: (a) => intake.submit(a), limits: { ...testConfig().ingest, maxPushBytes: 64 * 1024, maxPushItems: 50 } },
      });
    });
    afterAll(async () => {
      process.off('unhandledRejection', onUnhandled);
      await app.close();
      await rt.close();
    });

    const article = fc.record(
      {
        id: fc.oneof(fc.webUrl(), fc.string({ unit: 'binary', maxLength: 30 }), fc.constant('')),
        outlet: fc.oneof(fc.constantFrom('Vellmouth Courier', 'Harbour Ledger'), fc.string({ unit: 'binary', maxLength: 20 })),
        title: fc.string({ unit: 'binary', maxLength: 60 }),
        url: fc.option(fc.oneof(fc.webUrl(), fc.constant('javascript:alert(1)'), fc.string({ maxLength: 20 }))),
        published: fc.option(
          fc.oneof(
            fc.date({ noInvalidDate: true }).map((d) => d.toISOString()),
            fc.string({ maxLength: 30 }),
            fc.constant('Sat, 07 Sep 2002 00:00:01 GMT'),
          ),
        ),
        text: fc.option(
          fc.oneof(fc.constant('The levee failed on Friday and water reached the square.'), fc.string({ unit: 'binary', maxLength: 200 })),
        ),
        html: fc.option(fc.oneof(fc.constant('<p>A crane fell.</p><script>x()</script>'), fc.string({ maxLength: 100 }))),
      },
      { requiredKeys: [] },
    );
    const payload = fc.oneof(
      fc
        .array(fc.oneof(article, fc.jsonValue({ maxDepth: 3 })), { maxLength: 8 })
        .map((items) => ({ type: 'application/json', body: JSON.stringify(items) })),
      fc
        .array(article, { maxLength: 8 })
        .map((items) => ({ type: 'application/x-ndjson', body: items.map((i) => JSON.stringify(i)).join('\n') })),
      fc.string({ unit: 'binary', maxLength: 300 }).map((body) => ({ type: 'application/x-ndjson', body })),
      fc.string({ unit: 'binary', maxLength: 300 }).map((body) => ({ type: 'application/json', body })),
      fc.jsonValue({ maxDepth: 5 }).map((v) => ({ type: 'application/json', body: JSON.stringify(v) })),
    );

    it('answers thousands of malformed and hostile pushes with a result or a clear error, never a crash, and loses nothing accepted before', async () => {
      const first = await app.inject({
        method: 'POST',
        url: '/api/articles',
        payload: [
          {
            id: 'https://courier.example/kept-1',
            outlet: 'Vellmouth Courier',
            title: 'Levee breach',
            text: 'The levee at Dunvessel failed on Friday night.',
            published: '2026-10-02T08:00:00Z',
          },
          {
            id: 'https://courier.example/kept-2',
            outlet: 'Vellmouth Courier',
            title: 'Crane',
            text: 'A crane fell at the Korrin pier on Saturday.',
            published: '2026-10-03T08:00:00Z',
          },
        ],
      });
      expect(first.json().accepted).toBe(2);
      await intake.idle();
      const before = await rt.store.counts();

      await fc.assert(
        fc.asyncProperty(payload, async ({ type, body }) => {
          const res = await app.inject({ method: 'POST', url: '/api/articles', headers: { 'content-type': type }, body });
          expect(res.statusCode).toBeLessThan(500);
          const answer = res.json();
          if (res.statusCode === 200) {
            for (const r of answer.results) if (r.status !== 'accepted') expect(r.reason).toEqual(expect.any(String));
          } else {
            expect(answer.error.code).toMatch(/^STRAND_/);
            expect(answer.error.message.length).toBeGreaterThan(0);
          }
        }),
        { numRuns: 1500, seed: 42 },
      );
      await intake.idle();

      expect(unhandled).toEqual([]);
      const after = await rt.store.counts();
      // Some fuzzed articles are valid and were stored; none of the earlier ones went.
      expect(after.articles).toBeGreaterThan(before.articles);
      for (const id of ['https://courier.example/kept-1', 'https://courier.example/kept-2'])
        expect((await rt.store.getArticle(id))!.article.text).toMatch(/\w/);
    });
  });
});
