import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../src/api/build-app.js';
import { type FeedServer, startFeedServer } from '../../src/bench/feed-server.js';
import { createLogger } from '../../src/logger.js';
import { FeedPoller } from '../../src/poll/feed-poller.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import type { Store } from '../../src/store/store.js';
import { testConfig } from '../helpers/runtime.js';

describe('the feeds API', () => {
  let app: FastifyInstance;
  let strictApp: FastifyInstance;
  let store: Store;
  let server: FeedServer;
  let poller: FeedPoller;

  beforeAll(async () => {
    server = await startFeedServer(2, 3);
    store = openSqliteStore(':memory:');
    const deps = { store, submit: async () => undefined, options: testConfig().poll, logger: createLogger('silent') };
    poller = new FeedPoller({ ...deps, limits: { ...testConfig().ingest, allowPrivateNetworks: true } });
    const strict = new FeedPoller({ ...deps, limits: testConfig().ingest });
    const base = {
      store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'idle' as const, processed: 0, total: 0, stored: 0, rejected: 0 }),
    };
    app = await buildApp({ ...base, feeds: poller });
    strictApp = await buildApp({ ...base, feeds: strict });
  });
  afterAll(async () => {
    await app.close();
    await strictApp.close();
    await server.close();
    await store.close();
  });

  it('adds a feed, shows its health after a poll, pauses, resumes and removes it', async () => {
    const added = await app.inject({
      method: 'POST',
      url: '/api/feeds',
      payload: { url: server.url('/feeds/0.xml'), outlet: 'Harbour Ledger' },
    });
    expect(added.statusCode).toBe(201);
    const feed = added.json();
    expect(added.headers.location).toBe(`/api/feeds/${feed.id}`);
    expect(feed).toMatchObject({ outlet: 'Harbour Ledger', paused: false, origin: 'api', health: { status: 'waiting', requests: 0 } });

    await poller.pollDue();
    const listed = (await app.inject({ url: '/api/feeds' })).json().feeds;
    expect(listed).toHaveLength(1);
    expect(listed[0].health).toMatchObject({ status: 'ok', lastStatus: 200, itemsSeen: 3, itemsNew: 3, failures: 0, lastError: null });
    expect(listed[0].health.medianDelaySeconds).toEqual(expect.any(Number));

    const paused = await app.inject({ method: 'PATCH', url: `/api/feeds/${feed.id}`, payload: { paused: true } });
    expect(paused.json()).toMatchObject({ paused: true, health: { status: 'paused' } });
    const resumed = await app.inject({ method: 'PATCH', url: `/api/feeds/${feed.id}`, payload: { paused: false, intervalSeconds: 120 } });
    expect(resumed.json()).toMatchObject({ paused: false, intervalSeconds: 120 });
    expect((await app.inject({ method: 'DELETE', url: `/api/feeds/${feed.id}` })).statusCode).toBe(204);
    expect((await app.inject({ method: 'DELETE', url: `/api/feeds/${feed.id}` })).json().error.code).toBe('STRAND_NOT_FOUND');
    expect((await app.inject({ url: '/api/feeds' })).json().feeds).toEqual([]);
  });

  it.each([
    ['a body that is not JSON', { body: '{"url":', headers: { 'content-type': 'application/json' } }, 400, 'STRAND_REQUEST_INVALID'],
    ['a missing URL', { payload: { outlet: 'x' } }, 400, 'STRAND_REQUEST_INVALID'],
    ['an unknown field', { payload: { url: 'https://a.example/rss', colour: 'red' } }, 400, 'STRAND_REQUEST_INVALID'],
    ['a URL that is not one', { payload: { url: 'feed me' } }, 400, 'STRAND_REQUEST_INVALID'],
    ['a file URL', { payload: { url: 'file:///etc/passwd' } }, 400, 'STRAND_REQUEST_INVALID'],
    ['an oversized URL', { payload: { url: `https://a.example/${'x'.repeat(5000)}` } }, 400, 'STRAND_REQUEST_INVALID'],
    ['an interval under 30 s', { payload: { url: 'https://a.example/rss', intervalSeconds: 1 } }, 400, 'STRAND_REQUEST_INVALID'],
  ])('refuses %s with a clear error', async (_name, req, status, code) => {
    const res = await app.inject({ method: 'POST', url: '/api/feeds', ...req });
    expect(res.statusCode).toBe(status);
    expect(res.json().error.code).toBe(code);
  });

  it('refuses a feed on a private address (server-side request forgery) and a feed already polled', async () => {
    const forbidden = await strictApp.inject({
      method: 'POST',
      url: '/api/feeds',
      payload: { url: 'http://169.254.169.254/latest/meta-data' },
    });
    expect(forbidden.statusCode).toBe(403);
    expect(forbidden.json().error.code).toBe('STRAND_SOURCE_FORBIDDEN');
    expect((await app.inject({ method: 'POST', url: '/api/feeds', payload: { url: server.url('/feeds/1.xml') } })).statusCode).toBe(201);
    const again = await app.inject({ method: 'POST', url: '/api/feeds', payload: { url: server.url('/feeds/1.xml') } });
    expect(again.statusCode).toBe(409);
    expect(again.json().error.code).toBe('STRAND_FEED_CONFLICT');
  });

  it('refuses a change to an unknown feed, an empty change and a malformed id', async () => {
    expect((await app.inject({ method: 'PATCH', url: '/api/feeds/fd_0000000000000000', payload: { paused: true } })).statusCode).toBe(404);
    const list = (await app.inject({ url: '/api/feeds' })).json().feeds;
    expect((await app.inject({ method: 'PATCH', url: `/api/feeds/${list[0].id}`, payload: {} })).statusCode).toBe(400);
    expect((await app.inject({ method: 'PATCH', url: '/api/feeds/..%2F..%2Fetc', payload: { paused: true } })).statusCode).toBe(400);
  });

  it('documents the feed routes in the OpenAPI document', async () => {
    const doc = (await app.inject({ url: '/openapi.json' })).json();
    expect(Object.keys(doc.paths)).toEqual(expect.arrayContaining(['/api/feeds', '/api/feeds/{id}']));
  });
});
