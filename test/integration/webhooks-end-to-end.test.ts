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
import { testRuntime } from '../helpers/runtime.js';

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
