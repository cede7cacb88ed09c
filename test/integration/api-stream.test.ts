import type { FastifyInstance } from 'fastify';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import type { Article } from '../../src/records.js';
import type { Runtime } from '../../src/runtime.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';
import { type SseEvent, openSse } from '../helpers/sse.js';
import { ruleWithDefaults } from '../../src/notify/alert-rules.js';

const numbered = (events: SseEvent[]) => events.filter((e) => e.id !== undefined);

describe('the live stream (/api/stream)', () => {
  let rt: Runtime;
  let app: FastifyInstance;
  let base: string;
  let demo: Article[];

  beforeEach(async () => {
    demo ??= (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles;
    rt = await testRuntime();
    app = await buildApp({
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
      stream: { pollMs: 20, heartbeatMs: 100 },
    });
    base = await app.listen({ port: 0, host: '127.0.0.1' });
  });

  afterEach(async () => {
    await app.close();
    await rt.close();
  });

  it('sends every kept notification after a number, in order, then new ones as they are written', async () => {
    await runArticles(rt, demo.slice(0, 10));
    const kept = (await rt.store.notificationsAfter(0, 10_000)).items;
    // No subscriber is configured: the stream carries every type all the same.
    expect(new Set(kept.map((n) => n.type))).toEqual(
      new Set(['event.opened', 'event.outlet_added', 'event.cross_story_link', 'story.opened', 'story.outlet_added', 'article.linked']),
    );
    const s = await openSse(`${base}/api/stream?after=0`);
    try {
      expect(s.status).toBe(200);
      await s.until((es) => numbered(es).length >= kept.length);
      expect(numbered(s.events).map((e) => [Number(e.id), e.event, e.data])).toEqual(kept.map((n) => [n.seq, n.type, n.body]));
      // The body is what a webhook receives: its type says the same as the event field.
      expect(JSON.parse(numbered(s.events)[0]!.data!)).toMatchObject({ type: numbered(s.events)[0]!.event, data: expect.any(Object) });
      await runArticles(rt, demo.slice(10, 20));
      const all = (await rt.store.notificationsAfter(0, 10_000)).items;
      await s.until((es) => numbered(es).length >= all.length);
      expect(numbered(s.events).map((e) => Number(e.id))).toEqual(all.map((n) => n.seq));
    } finally {
      s.close();
    }
  });

  it('gives a client that disconnected and came back with Last-Event-ID exactly what it missed', async () => {
    const first = await openSse(`${base}/api/stream?after=0`);
    await runArticles(rt, demo.slice(0, 6));
    const upTo = (await rt.store.notificationsAfter(0, 10_000)).last;
    await first.until((es) => numbered(es).length === upTo);
    first.close();
    await runArticles(rt, demo.slice(6, 14));
    const missed = (await rt.store.notificationsAfter(upTo, 10_000)).items;
    expect(missed.length).toBeGreaterThan(0);
    const again = await openSse(`${base}/api/stream`, { 'last-event-id': numbered(first.events).at(-1)!.id! });
    try {
      await again.until((es) => numbered(es).length >= missed.length);
      await new Promise((r) => setTimeout(r, 100));
      expect(numbered(again.events).map((e) => Number(e.id))).toEqual(missed.map((n) => n.seq));
    } finally {
      again.close();
    }
  });

  it('resumes after Last-Event-ID with nothing missed, only the types asked for', async () => {
    await runArticles(rt, demo.slice(0, 15));
    const wanted = (await rt.store.notificationsAfter(5, 10_000)).items.filter(
      (n) => n.type === 'story.opened' || n.type === 'event.merged',
    );
    expect(wanted.length).toBeGreaterThan(0);
    const s = await openSse(`${base}/api/stream?types=story.opened,event.merged&after=0`, { 'last-event-id': '5' });
    try {
      await s.until((es) => numbered(es).length >= wanted.length);
      await new Promise((r) => setTimeout(r, 100));
      expect(numbered(s.events).map((e) => [Number(e.id), e.event])).toEqual(wanted.map((n) => [n.seq, n.type]));
    } finally {
      s.close();
    }
  });

  it("sends only what a subscription's rules select, each with the rule that matched", async () => {
    await rt.store.addSubscription(
      {
        name: 'story-desk',
        url: 'https://desk.example/hook',
        secret: `whsec_${'A'.repeat(32)}`,
        previous: null,
        rules: [ruleWithDefaults({ name: 'new stories', types: ['story.opened'] })],
        paused: false,
        origin: 'api',
        created: new Date().toISOString(),
      },
      0,
    );
    await runArticles(rt, demo.slice(0, 10));
    const wanted = (await rt.store.notificationsAfter(0, 10_000)).items.filter((n) => n.type === 'story.opened');
    const s = await openSse(`${base}/api/stream?subscription=story-desk&after=0`);
    try {
      await s.until((es) => numbered(es).length >= wanted.length);
      await new Promise((r) => setTimeout(r, 100));
      expect(numbered(s.events).map((e) => Number(e.id))).toEqual(wanted.map((n) => n.seq));
      expect(numbered(s.events).every((e) => JSON.parse(e.data!).rule === 'new stories')).toBe(true);
    } finally {
      s.close();
    }
    expect((await fetch(`${base}/api/stream?subscription=nobody`)).status).toBe(404);
  });

  it('starts with the next notification when no number is given, keeps the connection with heartbeats', async () => {
    await runArticles(rt, demo.slice(0, 5));
    const before = (await rt.store.notificationsAfter(0, 10_000)).last;
    const s = await openSse(`${base}/api/stream`);
    try {
      await s.until((es) => es.some((e) => e.comment === 'heartbeat'));
      expect(s.events[0]).toEqual({ retry: 3000 });
      expect(numbered(s.events)).toEqual([]);
      await runArticles(rt, demo.slice(5, 8));
      await s.until((es) => numbered(es).length > 0);
      expect(Number(numbered(s.events)[0]!.id)).toBe(before + 1);
    } finally {
      s.close();
    }
  });

  it('tells a client resuming before what was pruned where the stream resumes', async () => {
    await runArticles(rt, demo.slice(0, 5));
    const last = (await rt.store.notificationsAfter(0, 10_000)).last;
    // Nobody subscribed: every notification goes once older than the cut-off.
    await rt.store.pruneNotifications('2100-01-01T00:00:00.000Z');
    await runArticles(rt, demo.slice(5, 8));
    const s = await openSse(`${base}/api/stream`, { 'last-event-id': '1' });
    try {
      await s.until((es) => numbered(es).length > 0);
      const gap = s.events.find((e) => e.event === 'stream.gap')!;
      expect(JSON.parse(gap.data!)).toEqual({ after: 1, resumesAt: last + 1 });
      expect(Number(numbered(s.events)[0]!.id)).toBe(last + 1);
    } finally {
      s.close();
    }
  });

  it('refuses an unknown type or a Last-Event-ID that is not a number, with 400 and the reason', async () => {
    const bad = await app.inject({ url: '/api/stream?types=event.opened,event.exploded' });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().error.message).toMatch(/unknown notification type event\.exploded; known: event\.opened/);
    const id = await app.inject({ url: '/api/stream', headers: { 'last-event-id': "1 OR '1'='1" } });
    expect(id.statusCode).toBe(400);
    expect(id.json().error.code).toBe('STRAND_REQUEST_INVALID');
    expect((await app.inject({ url: '/api/stream?after=-1' })).statusCode).toBe(400);
  });

  it('ends its open streams when the server closes', async () => {
    const s = await openSse(`${base}/api/stream`);
    await s.until((es) => es.length > 0);
    // The server ends the stream itself, or close() would wait on it for ever.
    await app.close();
    await s.ended;
    s.close();
  });
});
