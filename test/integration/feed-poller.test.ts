import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { IncomingMessage, ServerResponse } from 'node:http';
import { type FeedServer, startFeedServer } from '../../src/bench/feed-server.js';
import { createLogger } from '../../src/logger.js';
import { FeedPoller, feedId } from '../../src/poll/feed-poller.js';
import type { Article } from '../../src/records.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import type { Store } from '../../src/store/store.js';
import { commitFixture } from '../contract/store-contract.js';
import { testConfig } from '../helpers/runtime.js';

const SPECIAL = {
  '/throttled': (_req: IncomingMessage, res: ServerResponse) => res.writeHead(429, { 'retry-after': '120' }).end(),
  '/down': (_req: IncomingMessage, res: ServerResponse) => res.writeHead(503, { 'retry-after': 'Thu, 01 Oct 2026 09:00:00 GMT' }).end(),
  '/broken': (_req: IncomingMessage, res: ServerResponse) => res.writeHead(500).end('oops'),
  '/loop': (_req: IncomingMessage, res: ServerResponse) => res.writeHead(302, { location: '/loop' }).end(),
  '/huge': (_req: IncomingMessage, res: ServerResponse) => {
    res.writeHead(200, { 'content-type': 'application/rss+xml' });
    res.end(`<rss version="2.0"><channel><title>x</title>${'<!-- pad -->'.repeat(20_000)}</channel></rss>`);
  },
  '/garbage': (_req: IncomingMessage, res: ServerResponse) =>
    res.writeHead(200, { 'content-type': 'text/html' }).end('<html><body>not a feed</body></html>'),
  '/bomb': (_req: IncomingMessage, res: ServerResponse) =>
    res
      .writeHead(200, { 'content-type': 'application/xml' })
      .end(
        '<?xml version="1.0"?><!DOCTYPE r [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]><rss version="2.0"><channel><title>&b;</title></channel></rss>',
      ),
  '/slow': () => undefined,
};

describe('polling feeds', () => {
  let server: FeedServer;
  let store: Store;
  let submitted: Article[];
  let clock: Date;
  const limits = { ...testConfig().ingest, allowPrivateNetworks: true, fetchTimeoutMs: 1500, maxFeedBytes: 100_000 };
  const options = { ...testConfig().poll, intervalSeconds: 600, maxBackoffSeconds: 3600 };
  const poller = (over: Partial<typeof options> = {}) =>
    new FeedPoller({
      store,
      submit: async (a) => void submitted.push(...a),
      limits,
      options: { ...options, ...over },
      logger: createLogger('silent'),
      now: () => clock,
      random: () => 0.5,
    });
  const later = (seconds: number) => {
    clock = new Date(clock.getTime() + seconds * 1000);
  };

  beforeEach(async () => {
    server = await startFeedServer(3, 4, SPECIAL);
    store = openSqliteStore(':memory:');
    submitted = [];
    clock = new Date('2026-10-01T08:00:00.000Z');
  });
  afterEach(async () => {
    await server.close();
    await store.close();
  });

  it('fetches new items once, then is answered 304 while the feed is unchanged (conditional GET, RFC 9110 13.1)', async () => {
    const p = poller();
    await p.load([0, 1, 2].map((i) => ({ url: server.url(`/feeds/${i}.xml`) })));
    const first = await p.pollDue();
    expect(first).toMatchObject({ polled: 3, fresh: 3, notModified: 0, newItems: 12 });
    expect(submitted).toHaveLength(12);
    expect(submitted[0]!.outlet).toMatch(/Outlet \d Harbour Desk/);

    // Not due yet: nothing is fetched.
    later(60);
    expect((await p.pollDue()).polled).toBe(0);

    later(600);
    server.resetCounts();
    const second = await p.pollDue();
    expect(second).toMatchObject({ polled: 3, notModified: 3, fresh: 0, newItems: 0, bytes: 0 });
    expect(server.counts()).toMatchObject({ requests: 3, notModified: 3, ok: 0 });

    // One feed publishes: only it is fetched again, and only its new item goes on.
    server.publish(1);
    later(600);
    const third = await p.pollDue();
    expect(third).toMatchObject({ fresh: 1, notModified: 2, newItems: 1 });
    expect(submitted.at(-1)!.title).toBe('Harbour report 1.5');
    const health = p.get(feedId(server.url('/feeds/1.xml')))!.state;
    expect(health).toMatchObject({ requests: 3, notModified: 1, itemsSeen: 9, itemsNew: 5, failures: 0, lastStatus: 200, lastError: null });
    expect(health.delaysMs.length).toBe(5);
  });

  it('counts an item already stored as seen, not new', async () => {
    await store.commitArticle(commitFixture('https://outlet0.example/news/4'));
    const p = poller();
    await p.load([{ url: server.url('/feeds/0.xml') }]);
    expect(await p.pollDue()).toMatchObject({ newItems: 3 });
    expect(p.list()[0]!.state).toMatchObject({ itemsSeen: 4, itemsNew: 3 });
  });

  it('honours Retry-After on 429 and 503, in seconds and as an HTTP-date', async () => {
    const p = poller();
    await p.load([{ url: server.url('/throttled') }, { url: server.url('/down') }]);
    expect(await p.pollDue()).toMatchObject({ polled: 2, throttled: 2, failed: 2 });
    const throttled = p.get(feedId(server.url('/throttled')))!.state;
    // 120 s asked, but never sooner than the feed's interval (600 s).
    expect(throttled.nextPollAt).toBe('2026-10-01T08:10:00.000Z');
    expect(throttled.lastError).toMatch(/HTTP 429 \(Retry-After 120 s\)/);
    expect(p.get(feedId(server.url('/down')))!.state.nextPollAt).toBe('2026-10-01T09:00:00.000Z');
  });

  it('backs off exponentially (with jitter) on errors, and recovers at once on success', async () => {
    const p = poller();
    await p.load([{ url: server.url('/broken') }]);
    const waits: number[] = [];
    for (let k = 0; k < 4; k++) {
      const before = clock.getTime();
      await p.pollDue();
      const s = p.get(feedId(server.url('/broken')))!.state;
      waits.push((Date.parse(s.nextPollAt) - before) / 1000);
      clock = new Date(s.nextPollAt);
    }
    // random() = 0.5: three quarters of min(cap, interval x 2^failures).
    expect(waits).toEqual([900, 1800, 2700, 2700]);
    expect(p.get(feedId(server.url('/broken')))!.state).toMatchObject({ failures: 4, lastError: 'HTTP 500', lastStatus: 500 });
  });

  it('refuses redirect loops, oversized bodies, slow servers, non-feeds and entity bombs, each with its reason, and keeps going', async () => {
    const p = poller();
    const urls = ['/loop', '/huge', '/slow', '/garbage', '/bomb', '/feeds/0.xml'].map((x) => server.url(x));
    await p.load(urls.map((url) => ({ url })));
    const round = await p.pollDue();
    expect(round).toMatchObject({ polled: 6, failed: 5, fresh: 1, newItems: 4 });
    const error = (path: string) => p.get(feedId(server.url(path)))!.state.lastError;
    expect(error('/loop')).toMatch(/redirects more than/);
    expect(error('/huge')).toMatch(/STRAND_SOURCE_TOO_LARGE/);
    expect(error('/slow')).toMatch(/did not answer within/);
    expect(error('/garbage')).toMatch(/STRAND_FEED_/);
    expect(error('/bomb')).toMatch(/STRAND_FEED_HOSTILE|entit/i);
  });

  it('pauses, resumes, changes and removes feeds; the list survives a restart', async () => {
    const p = poller();
    const a = await p.add({ url: server.url('/feeds/0.xml'), outlet: 'Harbour Ledger' });
    const b = await p.add({ url: server.url('/feeds/1.xml') });
    await p.update(b.id, { paused: true });
    expect(await p.pollDue()).toMatchObject({ polled: 1, newItems: 4 });
    expect(new Set(submitted.map((x) => x.outlet))).toEqual(new Set(['Harbour Ledger']));
    await p.update(b.id, { paused: false, intervalSeconds: 120 });
    expect(await p.pollDue()).toMatchObject({ polled: 1, newItems: 4 });
    expect(await p.remove(a.id)).toBe(true);
    expect(await p.remove(a.id)).toBe(false);

    const restarted = poller();
    await restarted.load([]);
    expect(restarted.list().map((f) => [f.id, f.intervalSeconds, f.origin, f.state.itemsNew])).toEqual([[b.id, 120, 'api', 4]]);
  });

  it('keeps the configured list in line with the configuration file at each start', async () => {
    const first = poller();
    await first.load([{ url: server.url('/feeds/0.xml') }, { url: server.url('/feeds/1.xml') }]);
    await first.add({ url: server.url('/feeds/2.xml') });
    const second = poller();
    await second.load([{ url: server.url('/feeds/1.xml'), intervalSeconds: 300 }]);
    expect(second.list().map((f) => [f.url, f.origin, f.intervalSeconds])).toEqual([
      [server.url('/feeds/1.xml'), 'config', 300],
      [server.url('/feeds/2.xml'), 'api', 600],
    ]);
  });

  it('refuses a malformed, non-http, private (unless allowed), known or surplus feed', async () => {
    const p = poller({ maxFeeds: 2 });
    await expect(p.add({ url: 'not a url' })).rejects.toMatchObject({ code: 'STRAND_REQUEST_INVALID' });
    await expect(p.add({ url: 'file:///etc/passwd' })).rejects.toMatchObject({ code: 'STRAND_REQUEST_INVALID' });
    const strict = new FeedPoller({
      store,
      submit: async () => undefined,
      limits: { ...limits, allowPrivateNetworks: false },
      options,
      logger: createLogger('silent'),
    });
    await expect(strict.add({ url: 'http://127.0.0.1:9/feed' })).rejects.toMatchObject({ code: 'STRAND_SOURCE_FORBIDDEN' });
    await p.add({ url: server.url('/feeds/0.xml') });
    await expect(p.add({ url: server.url('/feeds/0.xml') })).rejects.toMatchObject({ code: 'STRAND_FEED_CONFLICT' });
    await p.add({ url: server.url('/feeds/1.xml') });
    await expect(p.add({ url: server.url('/feeds/2.xml') })).rejects.toMatchObject({
      code: 'STRAND_FEED_CONFLICT',
      message: expect.stringMatching(/maxFeeds/),
    });
  });
});
