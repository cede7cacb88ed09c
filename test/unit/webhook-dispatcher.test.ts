import { createServer, type IncomingMessage } from 'node:http';
import type { AddressInfo } from 'node:net';
import { Webhook } from 'standardwebhooks';
import { afterEach, describe, expect, it } from 'vitest';
import { bareCommit } from '../helpers/bare-commit.js';
import { waitFor } from '../helpers/wait-for.js';
import { parseConfig } from '../../src/config/load-config.js';
import { createLogger } from '../../src/logger.js';
import { WebhookDispatcher, retryDelayMs } from '../../src/notify/webhook-dispatcher.js';
import { openSqliteStore, type SqliteStore } from '../../src/store/sqlite/sqlite-store.js';

const SECRET = 'whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw';
const open: { close(): unknown }[] = [];
afterEach(async () => {
  for (const o of open.splice(0)) await o.close();
});

function commitWithMessage(store: SqliteStore, created: string): Promise<unknown> {
  const c = bareCommit('a1', {
    article: { published: created, fetched: created, contentHash: 'h' },
    commit: { messages: [{ id: 'msg_test1', type: 'event.opened', body: '{"type":"event.opened"}', created }] },
  });
  return store.commitArticle(c);
}

function setup(
  url: string,
  fetchImpl?: typeof fetch,
  maxAttempts = 3,
  start = new Date('2026-10-10T00:00:00Z'),
  attempts: [string, string, number][] = [],
) {
  const store = openSqliteStore(':memory:');
  open.push(store);
  // The receivers here listen on loopback, which a deployment refuses unless allowed.
  const config = parseConfig({
    webhooks: { subscribers: [{ name: 'recv', url, secret: SECRET }], maxAttempts, allowPrivateNetworks: true },
  });
  let now = start;
  const d = new WebhookDispatcher({
    store,
    config: config.webhooks,
    logger: createLogger('silent'),
    now: () => now,
    random: () => 0.5,
    observer: { attempted: (subscriber, outcome, seconds) => attempts.push([subscriber, outcome, seconds]) },
    ...(fetchImpl ? { fetch: fetchImpl } : {}),
  });
  return { store, d, advance: (ms: number) => (now = new Date(now.getTime() + ms)), now: () => now };
}

describe('delivering webhooks', () => {
  it('POSTs a body whose signature verifies with the reference library, then marks it delivered', async () => {
    const received: { headers: IncomingMessage['headers']; body: string }[] = [];
    const server = createServer((req, res) => {
      let body = '';
      req
        .on('data', (c) => (body += c))
        .on('end', () => {
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
    const headers = {
      'webhook-id': h['webhook-id'] as string,
      'webhook-timestamp': h['webhook-timestamp'] as string,
      'webhook-signature': h['webhook-signature'] as string,
    };
    // The rule that selected it travels in the signed body.
    expect(new Webhook(SECRET).verify(received[0]!.body, headers)).toEqual({ type: 'event.opened', rule: 'configured types' });
    expect(h['webhook-id']).toBe('msg_test1');
    expect(await store.dueDeliveries('2999-01-01T00:00:00Z', 10)).toEqual([]);
  });

  it('retries failures with growing delays and gives up into the dead-letter list', async () => {
    const calls: string[] = [];
    const failing = (async () => {
      calls.push('call');
      return new Response('busy', { status: 503 });
    }) as typeof fetch;
    const attempts: [string, string, number][] = [];
    const { store, d, advance } = setup('http://127.0.0.1:9/never', failing, 3, undefined, attempts);
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
    // Each attempt is reported to the process's metrics, the last as given up.
    expect(attempts.map(([s, o]) => [s, o])).toEqual([
      ['recv', 'failed'],
      ['recv', 'failed'],
      ['recv', 'dead'],
    ]);
    expect(attempts.every(([, , seconds]) => seconds >= 0)).toBe(true);
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

  it('keeps serving a healthy receiver while another never answers: each subscriber has its own lane', async () => {
    const hanging = createServer(() => undefined);
    const arrived: { id: string; at: number }[] = [];
    const healthy = createServer((req, res) => {
      req.resume().on('end', () => {
        arrived.push({ id: req.headers['webhook-id'] as string, at: Date.now() });
        res.writeHead(204).end();
      });
    });
    for (const s of [hanging, healthy]) {
      await new Promise<void>((r) => s.listen(0, '127.0.0.1', r));
      open.push({
        close: () =>
          new Promise((r) => {
            s.closeAllConnections();
            s.close(r);
          }),
      });
    }
    const url = (s: typeof healthy) => `http://127.0.0.1:${(s.address() as AddressInfo).port}/hook`;
    const store = openSqliteStore(':memory:');
    open.push(store);
    const config = parseConfig({
      webhooks: {
        subscribers: [
          { name: 'hanging', url: url(hanging), secret: SECRET },
          { name: 'healthy', url: url(healthy), secret: SECRET },
        ],
        allowedNetworks: ['127.0.0.1'],
        timeoutMs: 10_000,
        pollMs: 50,
      },
    });
    const d = new WebhookDispatcher({ store, config: config.webhooks, logger: createLogger('silent') });
    // Five notifications now, five more a second later, each to both subscribers.
    const created = new Map<string, number>();
    const publish = async (from: number) => {
      const at = new Date();
      const messages = [0, 1, 2, 3, 4].map((i) => ({
        id: `msg_${from + i}`,
        type: 'event.opened',
        body: '{}',
        created: at.toISOString(),
      }));
      for (const m of messages) created.set(m.id, at.getTime());
      const c = bareCommit(`a${from}`, {
        article: { published: at.toISOString(), fetched: at.toISOString(), contentHash: `h${from}` },
        commit: { messages },
      });
      await store.commitArticle(c);
    };
    await publish(0);
    d.start();
    await new Promise((r) => setTimeout(r, 1000));
    await publish(5);
    for (let i = 0; i < 60 && arrived.length < 10; i++) await new Promise((r) => setTimeout(r, 50));
    const stopping = Date.now();
    await d.stop();
    expect(Date.now() - stopping).toBeLessThan(1000);
    expect(arrived.map((a) => a.id).sort()).toEqual([...created.keys()].sort());
    for (const a of arrived) expect(a.at - created.get(a.id)!).toBeLessThan(2000);
    // The hanging receiver's first delivery was abandoned at stop, not counted as a failure.
    expect(
      (await store.dueDeliveries('2999-01-01T00:00:00Z', 100)).filter((x) => x.subscriber === 'hanging').map((x) => x.attempts),
    ).toEqual(Array(10).fill(0));
  });

  it('refuses, at delivery, a subscriber whose name resolves to a private address', async () => {
    const store = openSqliteStore(':memory:');
    open.push(store);
    const config = parseConfig({
      webhooks: { subscribers: [{ name: 'recv', url: 'http://localhost:65531/hook', secret: SECRET }], maxAttempts: 1 },
    });
    const d = new WebhookDispatcher({ store, config: config.webhooks, logger: createLogger('silent') });
    await commitWithMessage(store, new Date().toISOString());
    await d.tick();
    expect((await store.deadLetters(10))[0]!.lastError).toMatch(
      /STRAND_SOURCE_FORBIDDEN: localhost is (127\.0\.0\.1|::1) \(loopback\); webhook targets on private networks are called only with webhooks.allowPrivateNetworks/,
    );
  });

  it('keeps polling after a poll fails (the store unreachable for a moment), and delivers once it answers again', async () => {
    const sent: string[] = [];
    const ok = (async (_url: string, init: { headers: Record<string, string> }) => {
      sent.push(init.headers['webhook-id']!);
      return new Response(null, { status: 204 });
    }) as unknown as typeof fetch;
    const { store, d } = setup('http://127.0.0.1:9/x', ok, 3, new Date());
    await commitWithMessage(store, new Date().toISOString());
    const list = store.listSubscriptions.bind(store);
    let failures = 2;
    store.listSubscriptions = async () => {
      if (failures-- > 0) throw new Error('store unreachable');
      return list();
    };
    d.start();
    await waitFor('the delivery after two failed polls', () => sent.length > 0, 5000);
    await d.stop();
    expect(sent).toEqual(['msg_test1']);
  });

  it('spreads retries with exponential backoff and full jitter, capped at one hour', () => {
    expect(retryDelayMs(1, () => 1)).toBe(5000);
    expect(retryDelayMs(3, () => 1)).toBe(20000);
    expect(retryDelayMs(20, () => 1)).toBe(3_600_000);
    expect(retryDelayMs(3, () => 0)).toBe(1000);
  });
});
