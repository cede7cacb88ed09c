import { createServer, type IncomingHttpHeaders, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { FastifyInstance } from 'fastify';
import { Webhook } from 'standardwebhooks';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { bareCommit } from '../helpers/bare-commit.js';
import { verifiedBySpecification } from '../helpers/spec-receiver.js';
import { buildApp } from '../../src/api/build-app.js';
import { parseConfig } from '../../src/config/load-config.js';
import { createLogger } from '../../src/logger.js';
import { WebhookDispatcher } from '../../src/notify/webhook-dispatcher.js';
import { openSqliteStore, type SqliteStore } from '../../src/store/sqlite/sqlite-store.js';

const CONFIGURED = `whsec_${Buffer.alloc(32, 3).toString('base64')}`;

/** A notification as the linker logs it: an event reported by an outlet for the first time. */
function outletAdded(n: number, label: string, outlets: string[]) {
  const type = 'event.outlet_added';
  const data = {
    event: { id: `ev_${n}`, label, outlets, participants: [], places: [] },
    outlet: outlets.at(-1),
    independent: true,
    independentOutlets: outlets.length,
  };
  return {
    id: `msg_${n}`,
    type,
    body: JSON.stringify({ type, timestamp: '2026-10-05T10:00:00.000Z', data }),
    created: '2026-10-05T10:00:00.000Z',
  };
}

describe('subscriptions through the API', () => {
  let store: SqliteStore;
  let app: FastifyInstance;
  let strictApp: FastifyInstance;
  let receiver: Server;
  let url: string;
  let now: Date;
  let status = 204;
  const got: { path: string; headers: IncomingHttpHeaders; body: string }[] = [];
  let dispatcher: WebhookDispatcher;
  let n = 0;

  const publish = async (...messages: ReturnType<typeof outletAdded>[]) =>
    store.commitArticle(bareCommit(`a${++n}`, { commit: { messages } }));
  const post = (path: string, payload?: object) => app.inject({ method: 'POST', url: path, ...(payload ? { payload } : {}) });

  beforeEach(async () => {
    got.length = 0;
    status = 204;
    now = new Date();
    receiver = createServer((req, res) => {
      let body = '';
      req
        .on('data', (c) => (body += c))
        .on('end', () => {
          got.push({ path: req.url!, headers: req.headers, body });
          res.writeHead(status).end();
        });
    });
    await new Promise<void>((r) => receiver.listen(0, '127.0.0.1', r));
    url = `http://127.0.0.1:${(receiver.address() as AddressInfo).port}`;
    store = openSqliteStore(':memory:');
    const config = parseConfig({
      webhooks: {
        subscribers: [{ name: 'configured', url: `${url}/configured`, secret: CONFIGURED }],
        allowPrivateNetworks: true,
        maxAttempts: 1,
      },
    });
    const base = {
      store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'idle' as const, processed: 0, total: 0, stored: 0, rejected: 0 }),
    };
    app = await buildApp({ ...base, webhooks: config.webhooks });
    strictApp = await buildApp(base);
    dispatcher = new WebhookDispatcher({ store, config: config.webhooks, logger: createLogger('silent'), now: () => now });
    await dispatcher.tick();
  });
  afterEach(async () => {
    await dispatcher.stop();
    await app.close();
    await strictApp.close();
    await new Promise((r) => receiver.close(r));
    await store.close();
  });

  it('makes a subscription whose rules select what it receives, from the moment it is made, each with the rule that matched', async () => {
    await publish(outletAdded(1, 'Dock workers walked out at Korrin Bay', ['A', 'B']));
    const made = await post('/api/subscriptions', {
      name: 'dock-desk',
      url: `${url}/dock-desk`,
      rules: [
        { name: 'strikes', words: ['walked out'] },
        { name: 'spreading', minOutlets: 3 },
      ],
    });
    expect(made.statusCode).toBe(201);
    expect(made.headers.location).toBe('/api/subscriptions/dock-desk');
    const { secret } = made.json();
    expect(secret).toMatch(/^whsec_/);
    await publish(
      outletAdded(2, 'Dock workers walked out again', ['A']),
      outletAdded(3, 'The levee broke', ['A', 'B', 'C']),
      outletAdded(4, 'A bridge reopened', ['A']),
    );
    await dispatcher.tick();
    await dispatcher.tick();
    const desk = got.filter((g) => g.path === '/dock-desk');
    // Made after msg_1, so it starts after it; msg_4 no rule selects.
    expect(desk.map((g) => [g.headers['webhook-id'], JSON.parse(g.body).rule])).toEqual([
      ['msg_2', 'strikes'],
      ['msg_3', 'spreading'],
    ]);
    for (const g of desk) expect(() => new Webhook(secret).verify(g.body, g.headers as Record<string, string>)).not.toThrow();
    // The configured subscriber (one rule selecting its types) receives the whole log.
    expect(got.filter((g) => g.path === '/configured').map((g) => g.headers['webhook-id'])).toEqual(['msg_1', 'msg_2', 'msg_3', 'msg_4']);

    const listed = (await app.inject({ url: '/api/subscriptions' })).json().subscriptions;
    expect(listed.map((s: { name: string; origin: string }) => [s.name, s.origin])).toEqual([
      ['configured', 'config'],
      ['dock-desk', 'api'],
    ]);
    expect(JSON.stringify(listed)).not.toContain('whsec_');
    const log = (await app.inject({ url: '/api/subscriptions/dock-desk/deliveries' })).json().deliveries;
    expect(log.map((d: { messageId: string; status: string; rule: string }) => [d.messageId, d.status, d.rule])).toEqual([
      ['msg_3', 'delivered', 'spreading'],
      ['msg_2', 'delivered', 'strikes'],
    ]);
    expect(log.every((d: { latencyMs: number; attempts: number }) => d.latencyMs >= 0 && d.attempts === 1)).toBe(true);
  });

  it('holds deliveries while paused and sends what came meanwhile on resuming', async () => {
    await post('/api/subscriptions', { name: 'desk', url: `${url}/desk` });
    expect((await app.inject({ method: 'PATCH', url: '/api/subscriptions/desk', payload: { paused: true } })).json().paused).toBe(true);
    await publish(outletAdded(1, 'x', ['A']));
    await dispatcher.tick();
    expect(got.filter((g) => g.path === '/desk')).toEqual([]);
    await app.inject({ method: 'PATCH', url: '/api/subscriptions/desk', payload: { paused: false } });
    await dispatcher.tick();
    expect(got.filter((g) => g.path === '/desk').map((g) => g.headers['webhook-id'])).toEqual(['msg_1']);
  });

  it('signs with the new and the old secret during the grace period of a rotation, then with the new one only', async () => {
    const { secret: old } = (await post('/api/subscriptions', { name: 'desk', url: `${url}/desk` })).json();
    const rotated = await post('/api/subscriptions/desk/rotate-secret', { graceHours: 1 });
    expect(rotated.statusCode).toBe(200);
    const { secret, previousSecretUntil } = rotated.json();
    expect(secret).not.toBe(old);
    expect(Date.parse(previousSecretUntil) - Date.now()).toBeGreaterThan(3_500_000);
    await publish(outletAdded(1, 'x', ['A']));
    await dispatcher.tick();
    const during = got.find((g) => g.path === '/desk')!;
    expect((during.headers['webhook-signature'] as string).split(' ')).toHaveLength(2);
    // A receiver holding either secret verifies it: the reference library, and one written from the specification alone.
    for (const s of [old, secret]) {
      expect(() => new Webhook(s).verify(during.body, during.headers as Record<string, string>)).not.toThrow();
      expect(verifiedBySpecification(s, during.headers as Record<string, string>, during.body, new Date())).toBe(true);
    }

    now = new Date(now.getTime() + 2 * 3_600_000);
    await publish(outletAdded(2, 'y', ['A']));
    await dispatcher.tick();
    const after = got.filter((g) => g.path === '/desk')[1]!;
    const sentAt = new Date(Number(after.headers['webhook-timestamp']) * 1000);
    expect(after.headers['webhook-signature']).toBe(new Webhook(secret).sign('msg_2', sentAt, after.body));
  });

  it('replays dead letters under the same webhook-id', async () => {
    await post('/api/subscriptions', { name: 'desk', url: `${url}/desk` });
    status = 500;
    await publish(outletAdded(1, 'x', ['A']));
    await dispatcher.tick();
    const dead = (await app.inject({ url: '/api/subscriptions/desk/deliveries?status=dead' })).json().deliveries;
    expect(dead.map((d: { messageId: string; lastError: string }) => [d.messageId, d.lastError])).toEqual([['msg_1', 'HTTP 500']]);
    status = 204;
    expect((await post('/api/subscriptions/desk/dead-letters/replay')).json()).toEqual({ replayed: 1 });
    // Due again from the moment of the replay.
    now = new Date(Date.now() + 1000);
    await dispatcher.tick();
    const desk = got.filter((g) => g.path === '/desk');
    expect(desk.map((g) => g.headers['webhook-id'])).toEqual(['msg_1', 'msg_1']);
    expect((await app.inject({ url: '/api/subscriptions/desk/deliveries' })).json().deliveries[0]).toMatchObject({
      status: 'delivered',
      attempts: 1,
    });
  });

  it('deletes a subscription made here; one from the configuration can only be paused here', async () => {
    await post('/api/subscriptions', { name: 'desk', url: `${url}/desk` });
    expect((await app.inject({ method: 'DELETE', url: '/api/subscriptions/desk' })).statusCode).toBe(204);
    expect((await app.inject({ url: '/api/subscriptions/desk' })).statusCode).toBe(404);
    const refused = await app.inject({ method: 'DELETE', url: '/api/subscriptions/configured' });
    expect([refused.statusCode, refused.json().error.code]).toEqual([409, 'STRAND_SUBSCRIPTION_CONFLICT']);
    expect((await app.inject({ method: 'PATCH', url: '/api/subscriptions/configured', payload: { url: `${url}/x` } })).statusCode).toBe(
      409,
    );
    expect((await post('/api/subscriptions/configured/rotate-secret')).statusCode).toBe(409);
    expect((await app.inject({ method: 'PATCH', url: '/api/subscriptions/configured', payload: { paused: true } })).json().paused).toBe(
      true,
    );
  });

  it('refuses malformed, hostile and oversized requests with a clear error, keeping what was stored', async () => {
    await post('/api/subscriptions', { name: 'desk', url: `${url}/desk` });
    const cases: [object, number, string][] = [
      [{ name: 'desk', url: `${url}/again` }, 409, 'STRAND_SUBSCRIPTION_CONFLICT'],
      [{ name: '../etc', url: `${url}/x` }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: 'file:///etc/passwd' }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: 'not a url' }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `https://example.org/${'a'.repeat(3000)}` }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `${url}/x`, secret: 'plain' }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `${url}/x`, rules: [] }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `${url}/x`, rules: [{ name: 'r', types: ['event.deleted'] }] }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `${url}/x`, rules: [{ name: 'r' }, { name: 'r' }] }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `${url}/x`, rules: [{ name: 'r', withinHours: 4 }] }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `${url}/x`, rules: Array.from({ length: 40 }, (_, i) => ({ name: `r${i}` })) }, 400, 'STRAND_REQUEST_INVALID'],
      [{ name: 'x', url: `${url}/x`, admin: true }, 400, 'STRAND_REQUEST_INVALID'],
    ];
    for (const [payload, code, error] of cases) {
      const res = await post('/api/subscriptions', payload);
      expect([res.statusCode, res.json().error.code], JSON.stringify(payload).slice(0, 80)).toEqual([code, error]);
    }
    // Loopback and private targets are refused unless the operator allows them.
    for (const target of ['http://127.0.0.1:9/x', 'http://10.0.0.8/x', 'http://[::1]/x', 'http://169.254.169.254/latest']) {
      const res = await strictApp.inject({ method: 'POST', url: '/api/subscriptions', payload: { name: 'x', url: target } });
      expect([res.statusCode, res.json().error.code]).toEqual([403, 'STRAND_SOURCE_FORBIDDEN']);
    }
    const names = (await app.inject({ url: '/api/subscriptions' })).json().subscriptions.map((s: { name: string }) => s.name);
    expect(names).toEqual(['configured', 'desk']);
  });
});
