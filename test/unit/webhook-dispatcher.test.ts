import { createServer, type IncomingMessage } from 'node:http';
import type { AddressInfo } from 'node:net';
import { Webhook } from 'standardwebhooks';
import { afterEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/load-config.js';
import { createLogger } from '../../src/logger.js';
import { WebhookDispatcher, retryDelayMs } from '../../src/notify/webhook-dispatcher.js';
import { openSqliteStore, type SqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import type { ArticleCommit } from '../../src/store/store.js';

const SECRET = 'whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw';
const open: { close(): unknown }[] = [];
afterEach(async () => {
  for (const o of open.splice(0)) await o.close();
});

function commitWithMessage(store: SqliteStore, created: string): Promise<unknown> {
  const c: ArticleCommit = {
    article: { id: 'a1', outlet: 'O', url: null, title: 't', published: created, fetched: created, language: null, text: 'x', contentHash: 'h', duplicateOf: null, source: 's' },
    sentences: [], mentions: [], links: [], events: [], idf: null,
    messages: [{ id: 'msg_test1', type: 'event.opened', body: '{"type":"event.opened"}', created, subscribers: ['recv'] }],
  };
  return store.commitArticle(c);
}

function setup(url: string, fetchImpl?: typeof fetch, maxAttempts = 3, start = new Date('2026-10-10T00:00:00Z')) {
  const store = openSqliteStore(':memory:');
  open.push(store);
  const config = parseConfig({ webhooks: { subscribers: [{ name: 'recv', url, secret: SECRET }], maxAttempts } });
  let now = start;
  const d = new WebhookDispatcher({ store, config: config.webhooks, logger: createLogger('silent'), now: () => now, random: () => 0.5, ...(fetchImpl ? { fetch: fetchImpl } : {}) });
  return { store, d, advance: (ms: number) => (now = new Date(now.getTime() + ms)), now: () => now };
}

describe('delivering webhooks', () => {
  it('POSTs a body whose signature verifies with the reference library, then marks it delivered', async () => {
    const received: { headers: IncomingMessage['headers']; body: string }[] = [];
    const server = createServer((req, res) => {
      let body = '';
      req.on('data', (c) => (body += c)).on('end', () => {
        received.push({ headers: req.headers, body });
        res.writeHead(204).end();
      });
    });
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
    open.push({ close: () => new Promise((r) => server.close(r)) });
    // A real clock: receivers reject timestamps more than 5 minutes from their own (specification).
    const now = new Date();
    const { store, d } = setup(`http://127.0.0.1:${(server.address() as AddressInfo).port}/hook`, undefined, 3, now);
    await commitWithMessage(store, now.toISOString());
    await d.tick();
    expect(received).toHaveLength(1);
    const h = received[0]!.headers;
    const headers = { 'webhook-id': h['webhook-id'] as string, 'webhook-timestamp': h['webhook-timestamp'] as string, 'webhook-signature': h['webhook-signature'] as string };
    expect(new Webhook(SECRET).verify(received[0]!.body, headers)).toEqual({ type: 'event.opened' });
    expect(h['webhook-id']).toBe('msg_test1');
    expect(await store.dueDeliveries('2999-01-01T00:00:00Z', 10)).toEqual([]);
  });

  it('retries failures with growing delays and gives up into the dead-letter list', async () => {
    const calls: string[] = [];
    const failing = (async () => {
      calls.push('call');
      return new Response('busy', { status: 503 });
    }) as typeof fetch;
    const { store, d, advance } = setup('http://127.0.0.1:9/never', failing, 3);
    await commitWithMessage(store, '2026-10-10T00:00:00.000Z');
    await d.tick();
    expect(calls).toHaveLength(1);
    await d.tick(); // not due yet: the retry waits
    expect(calls).toHaveLength(1);
    advance(retryDelayMs(1, () => 0.5));
    await d.tick();
    expect(calls).toHaveLength(2);
    advance(retryDelayMs(2, () => 0.5));
    await d.tick();
    expect(calls).toHaveLength(3);
    const dead = await store.deadLetters(10);
    expect(dead.map((x) => [x.messageId, x.attempts, x.lastError])).toEqual([['msg_test1', 3, 'HTTP 503']]);
  });

  it('counts only 2xx as delivered: a redirect is a failure', async () => {
    const redirect = (async () => new Response(null, { status: 302, headers: { location: 'http://elsewhere.invalid/' } })) as typeof fetch;
    const { store, d } = setup('http://127.0.0.1:9/x', redirect, 1);
    await commitWithMessage(store, '2026-10-10T00:00:00.000Z');
    await d.tick();
    expect((await store.deadLetters(10))[0]!.lastError).toBe('HTTP 302');
  });

  it('records a network error as the reason', async () => {
    const probe = createServer();
    await new Promise<void>((r) => probe.listen(0, '127.0.0.1', r));
    const port = (probe.address() as AddressInfo).port;
    await new Promise((r) => probe.close(r));
    const { store, d } = setup(`http://127.0.0.1:${port}/closed-port`, undefined, 1);
    await commitWithMessage(store, '2026-10-10T00:00:00.000Z');
    await d.tick();
    expect((await store.deadLetters(10))[0]!.lastError).toMatch(/ECONNREFUSED|connect/i);
  });

  it('spreads retries with exponential backoff and full jitter, capped at one hour', () => {
    expect(retryDelayMs(1, () => 1)).toBe(5000);
    expect(retryDelayMs(3, () => 1)).toBe(20000);
    expect(retryDelayMs(20, () => 1)).toBe(3_600_000);
    expect(retryDelayMs(3, () => 0)).toBe(1000);
  });
});
