import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { extractArticleText } from '../../src/ingest/fetch-full-text.js';
import { createLogger } from '../../src/logger.js';
import { FeedPoller } from '../../src/poll/feed-poller.js';
import type { Article } from '../../src/records.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import type { Store } from '../../src/store/store.js';
import { testConfig } from '../helpers/runtime.js';

const PAGE = `<!doctype html><html><head><title>Crane falls at Korrin pier</title><script>track()</script><style>p{}</style></head><body>
<nav><a href="/">Home</a> | <a href="/news">News</a></nav><header><h1>Harbour Ledger</h1></header>
<article><h1>Crane falls at Korrin pier</h1>
<p>A container crane collapsed at the Korrin pier on Tuesday morning, crushing two empty trucks and closing berth four for the rest of the week, the port authority said.</p>
<p>No one was hurt. Workers had left the quay minutes earlier for a shift change, according to the dockworkers' guild, which called for an inquiry into maintenance at the terminal.</p>
<figure><img src="x.jpg"><figcaption>The fallen crane on Tuesday.</figcaption></figure>
<p>The harbour board said inspectors would examine the other cranes on the pier before berth four reopens. Shipping lines were told to expect delays of up to three days.</p></article>
<aside>Related: ferry timetable changes</aside><footer>Harbour Ledger, all rights reserved</footer></body></html>`;

describe('full text of summary-only feeds', () => {
  it('extracts the article body of a page: no navigation, captions, asides or footer', () => {
    const text = extractArticleText(PAGE, 'https://ledger.example/crane');
    expect(text).toMatch(/^A container crane collapsed/);
    expect(text).toMatch(/delays of up to three days\.$/);
    expect(text.split('\n\n')).toHaveLength(3);
    for (const noise of ['Home', 'The fallen crane on Tuesday', 'ferry timetable', 'all rights reserved', 'track()'])
      expect(text).not.toContain(noise);
  });

  it('says clearly when a page has no article', () => {
    expect(() => extractArticleText('<html><body><nav>Menu</nav></body></html>', 'https://ledger.example/x')).toThrow(
      /no article text found/,
    );
  });

  describe('when polling', () => {
    let server: Server;
    let base: string;
    let store: Store;
    let submitted: Article[];

    beforeEach(async () => {
      server = createServer((req, res) => {
        if (req.url === '/feed.xml') {
          res.writeHead(200, { 'content-type': 'application/rss+xml' })
            .end(`<rss version="2.0"><channel><title>Harbour Ledger</title><link>${base}/</link><description>d</description>
            <item><title>Crane falls at Korrin pier</title><link>/crane</link><description>A crane fell.</description><pubDate>Tue, 06 Oct 2026 09:00:00 GMT</pubDate></item>
            <item><title>Missing page</title><link>/gone</link><description>Something happened.</description><pubDate>Tue, 06 Oct 2026 10:00:00 GMT</pubDate></item>
          </channel></rss>`);
        } else if (req.url === '/crane') {
          res.writeHead(200, { 'content-type': 'text/html; charset=utf-8' }).end(PAGE);
        } else {
          res.writeHead(404).end();
        }
      });
      await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
      base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
      store = openSqliteStore(':memory:');
      submitted = [];
    });
    afterEach(async () => {
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
      await store.close();
    });

    const poller = (fullText: boolean) =>
      new FeedPoller({
        store,
        submit: async (a) => void submitted.push(...a),
        limits: { ...testConfig().ingest, allowPrivateNetworks: true },
        options: { ...testConfig().poll, fullText },
        logger: createLogger('silent'),
      });

    it('replaces a summary by the page body, keeps the summary when the page fails, and says so in the health', async () => {
      const p = poller(true);
      await p.load([{ url: `${base}/feed.xml` }]);
      await p.pollDue();
      const [crane, gone] = submitted;
      expect(crane!.text).toMatch(/^A container crane collapsed/);
      expect(crane!.contentHash).not.toBe(gone!.contentHash);
      expect(gone!.text).toBe('Something happened.');
      expect(p.list()[0]!.state).toMatchObject({
        failures: 0,
        lastStatus: 200,
        lastError: expect.stringMatching(/full text not fetched for 1 item/),
      });
      await p.stop();
    });

    it('leaves summaries alone unless poll.fullText is on', async () => {
      const p = poller(false);
      await p.load([{ url: `${base}/feed.xml` }]);
      await p.pollDue();
      expect(submitted.map((a) => a.text)).toEqual(['A crane fell.', 'Something happened.']);
      await p.stop();
    });
  });
});
