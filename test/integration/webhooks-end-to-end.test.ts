import { NOTIFICATION_TYPES } from '../../src/notify/notification-types.js';
import { readFileSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { Webhook } from 'standardwebhooks';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runSources } from '../../src/cli/run-sources.js';
import { createLogger } from '../../src/logger.js';
import { WebhookDispatcher } from '../../src/notify/webhook-dispatcher.js';
import type { Runtime } from '../../src/runtime.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { runArticles, testRuntime } from '../helpers/runtime.js';
import { verifiedBySpecification } from '../helpers/spec-receiver.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';

const SECRET = 'whsec_c3RyYW5kbGluZS1leGFtcGxlLXNlY3JldC1rZXk=';

describe('feeds in, signed notifications out', () => {
  let server: Server;
  let feedServer: Server;
  let rt: Runtime;
  const received: { type: string; headers: Record<string, string>; body: string }[] = [];

  beforeAll(async () => {
    server = createServer((req, res) => {
      let body = '';
      req
        .on('data', (c) => (body += c))
        .on('end', () => {
          received.push({ type: JSON.parse(body).type, headers: req.headers as Record<string, string>, body });
          res.writeHead(200).end('ok');
        });
    });
    // The demo feeds of two outlets, served over HTTP, so ingest reads URLs as it would live.
    feedServer = createServer((req, res) => {
      const file = req.url === '/northwire.json' ? 'northwire.feed.json' : req.url === '/courier.xml' ? 'courier.rss.xml' : null;
      if (!file) return void res.writeHead(404).end();
      res
        .writeHead(200, { 'content-type': file.endsWith('.json') ? 'application/feed+json' : 'application/rss+xml; charset=utf-8' })
        .end(readFileSync(`${DEMO_DIR}feeds/${file}`));
    });
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
    await new Promise<void>((r) => feedServer.listen(0, '127.0.0.1', r));
    // The feeds are served on 127.0.0.1, which live ingest refuses unless allowed.
    rt = await testRuntime({
      ingest: { allowPrivateNetworks: true },
      webhooks: {
        allowPrivateNetworks: true,
        subscribers: [{ name: 'desk', url: `http://127.0.0.1:${(server.address() as AddressInfo).port}/hook`, secret: SECRET }],
      },
    });
  });
  afterAll(async () => {
    await rt.close();
    await new Promise((r) => server.close(r));
    await new Promise((r) => feedServer.close(r));
  });

  it('reads feeds from URLs and delivers "event opened", "event reached a new outlet" and their story counterparts, signed', async () => {
    const base = `http://127.0.0.1:${(feedServer.address() as AddressInfo).port}`;
    const summary = await runSources(rt, [`${base}/northwire.json`, `${base}/courier.xml`, `${base}/missing.json`]);
    expect(summary.stored).toBe(35);
    expect(summary.problems).toEqual([
      expect.objectContaining({ code: 'STRAND_SOURCE_UNREADABLE', message: expect.stringMatching(/HTTP 404/) }),
    ]);

    const dispatcher = new WebhookDispatcher({ store: rt.store, config: rt.config.webhooks, logger: createLogger('silent') });
    // The first poll hands the log to the subscriber's rules, then each delivers what is due.
    await dispatcher.tick();
    for (let i = 0; i < 20 && (await rt.store.dueDeliveries(new Date().toISOString(), 1)).length > 0; i++) await dispatcher.tick();

    const types = new Set(received.map((r) => r.type));
    expect([...types]).toEqual(expect.arrayContaining(['event.opened', 'event.outlet_added', 'story.opened', 'story.outlet_added']));
    // Nothing outside the catalogue subscribers choose from is sent.
    expect([...types].filter((t) => !(NOTIFICATION_TYPES as readonly string[]).includes(t))).toEqual([]);
    expect(received.filter((r) => r.type === 'event.opened')).toHaveLength(summary.eventsOpened);
    expect(received.filter((r) => r.type === 'story.opened')).toHaveLength(summary.storiesOpened);
    const story = JSON.parse(received.find((r) => r.type === 'story.outlet_added')!.body).data;
    expect(story).toMatchObject({
      story: { id: expect.stringMatching(/^st_/) },
      outlet: expect.any(String),
      score: expect.any(Number),
      evidence: expect.any(Object),
      note: expect.stringMatching(/machine suggestion/),
    });
    const wh = new Webhook(SECRET);
    for (const r of received) {
      expect(() =>
        wh.verify(r.body, {
          'webhook-id': r.headers['webhook-id']!,
          'webhook-timestamp': r.headers['webhook-timestamp']!,
          'webhook-signature': r.headers['webhook-signature']!,
        }),
      ).not.toThrow();
    }
    const added = received.find((r) => r.type === 'event.outlet_added')!;
    expect(JSON.parse(added.body).data).toMatchObject({
      outlet: expect.any(String),
      mention: { score: expect.any(Number), evidence: expect.any(Object) },
      note: expect.stringMatching(/machine suggestion/),
    });
    // The Courier's verbatim copy of the Northwire wire story is flagged as not independent.
    expect(received.some((r) => r.type === 'event.outlet_added' && JSON.parse(r.body).data.independent === false)).toBe(true);

    // Delivered notifications stay in the outbox until notificationDays after delivery, then go.
    const outbox = () =>
      (rt.store as unknown as { db: import('better-sqlite3').Database }).db.prepare('SELECT count(*) FROM outbox').pluck().get();
    expect(outbox()).toBe(received.length);
    expect(await rt.store.pruneNotifications(new Date(Date.now() - 86_400_000).toISOString())).toBe(0);
    expect(await rt.store.pruneNotifications(new Date(Date.now() + 1000).toISOString())).toBe(received.length);
    expect(outbox()).toBe(0);
  });
});

describe('a receiver written from the specification', () => {
  // The test vector of the specification's library tests (checks.md, "Webhooks").
  const vector = {
    secret: 'whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw',
    headers: {
      'webhook-id': 'msg_p5jXN8AQM9LWM0D4loKWxJek',
      'webhook-timestamp': '1614265330',
      'webhook-signature': 'v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=',
    },
    body: '{"test": 2432232314}',
    at: new Date(1614265330 * 1000),
  };

  it('accepts the published test vector, and refuses it altered, stale or under another secret', () => {
    expect(verifiedBySpecification(vector.secret, vector.headers, vector.body, vector.at)).toBe(true);
    expect(verifiedBySpecification(vector.secret, vector.headers, vector.body.replace('2', '3'), vector.at)).toBe(false);
    expect(verifiedBySpecification(vector.secret, vector.headers, vector.body, new Date(vector.at.getTime() + 301_000))).toBe(false);
    expect(verifiedBySpecification(SECRET, vector.headers, vector.body, vector.at)).toBe(false);
    // One good entry among several is enough (a sender signs with two secrets while rotating).
    const two = { ...vector.headers, 'webhook-signature': `v1,AAAA ${vector.headers['webhook-signature']}` };
    expect(verifiedBySpecification(vector.secret, two, vector.body, vector.at)).toBe(true);
  });
});

describe('a receiver down for five minutes during a replay', () => {
  it('gets every notification once it is back: none lost, none twice, each under the one webhook-id it was given', async () => {
    let down = true;
    let now = new Date();
    const got: { id: string; body: string; verified: boolean }[] = [];
    const refused: string[] = [];
    const receiver = createServer((req, res) => {
      let body = '';
      req
        .on('data', (c) => (body += c))
        .on('end', () => {
          const id = req.headers['webhook-id'] as string;
          if (down) {
            refused.push(id);
            return void res.writeHead(503).end();
          }
          got.push({ id, body, verified: verifiedBySpecification(SECRET, req.headers as Record<string, string>, body, now) });
          res.writeHead(204).end();
        });
    });
    await new Promise<void>((r) => receiver.listen(0, '127.0.0.1', r));
    const rt = await testRuntime({
      webhooks: {
        allowPrivateNetworks: true,
        subscribers: [{ name: 'desk', url: `http://127.0.0.1:${(receiver.address() as AddressInfo).port}/hook`, secret: SECRET }],
      },
    });
    // The dispatcher's clock runs ahead a second a poll, so five minutes pass in seconds.
    const d = new WebhookDispatcher({
      store: rt.store,
      config: rt.config.webhooks,
      logger: createLogger('silent'),
      now: () => now,
      random: () => 0.5,
    });
    const seconds = async (n: number) => {
      for (let i = 0; i < n; i++) {
        now = new Date(now.getTime() + 1000);
        await d.tick();
      }
    };
    try {
      const demo = (await readReplayInput([`${DEMO_DIR}feeds`], rt.config.ingest)).articles;
      const started = now.getTime();
      await runArticles(rt, demo.slice(0, 50));
      await seconds(150);
      await runArticles(rt, demo.slice(50));
      await seconds(300 - (now.getTime() - started) / 1000);
      expect(refused.length).toBeGreaterThan(0);
      down = false;
      for (let i = 0; i < 20 * 60 && (await rt.store.dueDeliveries('2999-01-01T00:00:00.000Z', 1)).length > 0; i++) await seconds(1);

      const sent = (await rt.store.notificationsAfter(0, 100_000)).items;
      expect(sent.length).toBeGreaterThan(100);
      expect(await rt.store.deadLetters(10)).toEqual([]);
      expect(got.map((g) => g.id).sort()).toEqual(sent.map((n) => n.id).sort());
      expect(new Set(got.map((g) => g.id)).size).toBe(got.length);
      // Retried under the same id, with the same body: the logged one, with the rule that selected it.
      expect(new Set(refused).size).toBeGreaterThan(0);
      for (const id of new Set(refused)) expect(sent.some((n) => n.id === id)).toBe(true);
      const bodies = new Map(sent.map((n) => [n.id, n.body]));
      expect(got.every((g) => g.verified)).toBe(true);
      for (const g of got) expect(JSON.parse(g.body)).toEqual({ ...JSON.parse(bodies.get(g.id)!), rule: 'configured types' });
    } finally {
      await d.stop();
      await rt.close();
      await new Promise((r) => receiver.close(r));
    }
  }, 120_000);
});
