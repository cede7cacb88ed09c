import type { FastifyInstance } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Runtime } from '../../src/runtime.js';
import { demoApi } from '../helpers/runtime.js';

let rt: Runtime;
let app: FastifyInstance;

beforeAll(async () => {
  ({ rt, app } = await demoApi());
});
afterAll(async () => {
  await app.close();
  await rt.close();
});

const get = async (url: string) => {
  const r = await app.inject({ method: 'GET', url });
  return { status: r.statusCode, body: r.headers['content-type']?.toString().includes('json') ? r.json() : r.body, headers: r.headers };
};

describe('the query API', () => {
  it('reports health with counts and ingest progress', async () => {
    const { status, body } = await get('/api/health');
    expect(status).toBe(200);
    expect(body.status).toBe('ok');
    expect(body.counts.articles).toBe(101);
    expect(body.ingest.state).toBe('finished');
  });

  it('lists events with the caution that links are machine suggestions', async () => {
    const { status, body } = await get('/api/events?limit=5');
    expect(status).toBe(200);
    expect(body.events).toHaveLength(5);
    expect(body.total).toBeGreaterThan(5);
    expect(body.caution).toMatch(/machine suggestions/);
    const lastSeen = body.events.map((e: { lastSeen: string }) => e.lastSeen);
    expect(lastSeen).toEqual([...lastSeen].sort().reverse());
  });

  it('filters events by outlet, words, dates and outlet count', async () => {
    const byOutlet = (await get(`/api/events?outlet=${encodeURIComponent('Quarrenby Post')}&limit=200`)).body;
    expect(byOutlet.events.every((e: { outlets: string[] }) => e.outlets.includes('Quarrenby Post'))).toBe(true);
    const words = (await get('/api/events?q=Orlin&limit=200')).body;
    expect(words.total).toBeGreaterThan(0);
    const dated = (await get('/api/events?from=2026-10-16&to=2026-10-16&limit=200')).body;
    for (const e of dated.events) expect(e.lastSeen >= '2026-10-16' && e.firstSeen <= '2026-10-16T23:59:59.999Z').toBe(true);
    const wide = (await get('/api/events?minOutlets=3&sort=outlets&limit=200')).body;
    expect(wide.events.every((e: { outlets: string[] }) => e.outlets.length >= 3)).toBe(true);
  });

  it('shows one event with its mentions grouped by outlet, with score and evidence, and its timeline', async () => {
    const [top] = (await get('/api/events?sort=outlets&limit=1')).body.events;
    const { status, body } = await get(`/api/events/${top.id}`);
    expect(status).toBe(200);
    expect(body.byOutlet.map((g: { outlet: string }) => g.outlet).sort()).toEqual([...top.outlets].sort());
    const m = body.byOutlet[0].mentions[0];
    expect(m).toMatchObject({
      articleId: expect.any(String),
      text: expect.any(String),
      score: expect.any(Number),
      evidence: { similarity: expect.any(Number), timeDecay: expect.any(Number) },
    });
    expect(body.timeline.reduce((n: number, d: { mentions: number }) => n + d.mentions, 0)).toBe(top.mentionCount);
    expect(body.timeline.flatMap((d: { newOutlets: string[] }) => d.newOutlets).sort()).toEqual([...top.outlets].sort());
  });

  it('shows one article, by URL-encoded id, with its sentences and their links', async () => {
    const id = 'https://ebs-news.example/news/ebs01';
    const { status, body } = await get(`/api/articles/${encodeURIComponent(id)}`);
    expect(status).toBe(200);
    expect(body.article.outlet).toBe('EBS News');
    expect(body.sentences[0].text).toMatch(/^A levee on the River Veshel gave way/);
    expect(body.sentences[0].links[0]).toMatchObject({
      eventId: expect.stringMatching(/^ev_/),
      score: expect.any(Number),
      evidence: expect.any(Object),
    });
    expect(body.caution).toMatch(/machine suggestions/);
  });

  it('sends a client asking for a merged-away event to the event it was merged into', async () => {
    const events = (await get('/api/events?limit=200&sort=mentions')).body.events as { id: string }[];
    let merge: { from: string; into: string } | undefined;
    for (const e of events) {
      const d = (await get(`/api/events/${e.id}`)).body;
      if (d.merges.length) {
        merge = d.merges[0];
        break;
      }
    }
    // The demo has fragments of one event that consolidation joins (the Korrin Bay fire).
    expect(merge).toBeDefined();
    const r = await app.inject({ method: 'GET', url: `/api/events/${merge!.from}` });
    expect(r.statusCode).toBe(308);
    expect(r.headers.location).toBe(`/api/events/${merge!.into}`);
    // Not kept by caches: an analyst can undo a merge.
    expect(r.headers['cache-control']).toBe('no-store');
  });

  it('lists stories, each with its events, outlets and articles counted, with the caution', async () => {
    const { status, body } = await get('/api/stories?limit=200');
    expect(status).toBe(200);
    expect(body.total).toBeGreaterThan(1);
    expect(body.caution).toMatch(/machine suggestions/);
    const lastSeen = body.stories.map((s: { lastSeen: string }) => s.lastSeen);
    expect(lastSeen).toEqual([...lastSeen].sort().reverse());
    // Every stored article is in exactly one story.
    expect(body.stories.reduce((n: number, s: { articleCount: number }) => n + s.articleCount, 0)).toBe(101);
    const wide = (await get('/api/stories?minOutlets=3&sort=outlets&limit=200')).body;
    expect(wide.stories.every((s: { outlets: string[] }) => s.outlets.length >= 3)).toBe(true);
    const byOutlet = (await get(`/api/stories?outlet=${encodeURIComponent('Quarrenby Post')}&limit=200`)).body;
    expect(byOutlet.stories.length).toBeGreaterThan(0);
    expect(byOutlet.stories.every((s: { outlets: string[] }) => s.outlets.includes('Quarrenby Post'))).toBe(true);
    expect((await get('/api/stories?q=Orlin&limit=200')).body.total).toBeGreaterThan(0);
  });

  it('shows one story with its events, its articles by outlet and its timeline; its events filter by story', async () => {
    const [top] = (await get('/api/stories?sort=articles&limit=1')).body.stories;
    const { status, body } = await get(`/api/stories/${top.id}`);
    expect(status).toBe(200);
    expect(body.story.id).toBe(top.id);
    expect(body.events.length).toBe(top.eventCount);
    expect(body.byOutlet.map((g: { outlet: string }) => g.outlet).sort()).toEqual([...top.outlets].sort());
    expect(body.byOutlet.reduce((n: number, g: { articles: unknown[] }) => n + g.articles.length, 0)).toBe(top.articleCount);
    expect(body.timeline.reduce((n: number, d: { articles: number }) => n + d.articles, 0)).toBe(top.articleCount);
    expect(body.timeline.flatMap((d: { newEvents: string[] }) => d.newEvents).sort()).toEqual(
      body.events.map((e: { id: string }) => e.id).sort(),
    );
    expect(body.caution).toMatch(/machine suggestions/);
    const events = (await get(`/api/events?story=${top.id}&limit=200`)).body;
    expect(events.events.map((e: { id: string }) => e.id).sort()).toEqual(body.events.map((e: { id: string }) => e.id).sort());
    expect(events.events.every((e: { story: string }) => e.story === top.id)).toBe(true);
    const article = (await get(`/api/articles/${encodeURIComponent(body.byOutlet[0].articles[0].id)}`)).body;
    expect(article.article.story).toBe(top.id);
  });

  it('answers an unknown story with 404', async () => {
    expect(await get('/api/stories/st_0000')).toMatchObject({ status: 404, body: { error: { code: 'STRAND_NOT_FOUND' } } });
  });

  it('answers unknown ids with 404 and a coded error', async () => {
    expect(await get('/api/events/ev_0000')).toMatchObject({ status: 404, body: { error: { code: 'STRAND_NOT_FOUND' } } });
    expect(await get(`/api/articles/${encodeURIComponent('https://nowhere.example/x')}`)).toMatchObject({ status: 404 });
    expect(await get('/api/nothing-here')).toMatchObject({ status: 404, body: { error: { code: 'STRAND_NOT_FOUND' } } });
  });

  it.each([
    '/api/events?limit=0',
    '/api/events?limit=100000',
    '/api/events?from=yesterday',
    '/api/events?sort=random',
    '/api/events?unknown=1',
    `/api/events?q=${'x'.repeat(300)}`,
    `/api/events?story=${'s'.repeat(300)}`,
    '/api/stories?limit=0',
    '/api/stories?sort=mentions',
    '/api/stories?from=tomorrow',
    '/api/stories?q=%27%20OR%201%3D1%20--&unknown=1',
  ])('refuses a malformed query with 400: %s', async (url) => {
    expect(await get(url)).toMatchObject({ status: 400, body: { error: { code: 'STRAND_REQUEST_INVALID' } } });
  });

  it('serves an OpenAPI 3.1 document describing every route', async () => {
    const { status, body } = await get('/openapi.json');
    expect(status).toBe(200);
    expect(body.openapi).toBe('3.1.0');
    expect(Object.keys(body.paths).sort()).toEqual([
      '/api/articles/{id}',
      '/api/corrections',
      '/api/corrections/{id}',
      '/api/corrections/{id}/undo',
      '/api/events',
      '/api/events/{id}',
      '/api/health',
      '/api/keys',
      '/api/keys/{id}',
      '/api/outlets',
      '/api/reviews',
      '/api/reviews/{id}/answers',
      '/api/reviews/{id}/corrections',
      '/api/reviews/{id}/next',
      '/api/reviews/{id}/report',
      '/api/stories',
      '/api/stories/{id}',
      '/api/stream',
      '/api/subscriptions',
      '/api/subscriptions/{name}',
      '/api/subscriptions/{name}/dead-letters/replay',
      '/api/subscriptions/{name}/deliveries',
      '/api/subscriptions/{name}/rotate-secret',
      '/api/webhooks/dead-letters',
      '/metrics',
    ]);
    expect(Object.keys(body.paths['/api/stream'].get.responses[200].content)).toEqual(['text/event-stream']);
    expect(body.info.description).toMatch(/machine suggestions/);
  });

  it('serves the desk page and its modules, each with a strict content security policy, and nothing else', async () => {
    const page = await get('/');
    expect(page.status).toBe(200);
    expect(page.body).toMatch(/machine suggestions/);
    for (const path of ['/', '/app.js', '/style.css', '/js/desk.js', '/js/charts.js']) {
      const r = await get(path);
      expect(r.status, path).toBe(200);
      expect(r.headers['content-security-policy'], path).toMatch(/default-src 'self'; .*script-src 'self'/);
      expect(r.headers['x-content-type-options']).toBe('nosniff');
    }
    expect((await get('/js/desk.js')).headers['content-type']).toMatch(/^text\/javascript/);
    // Only the files of the page: no way up out of its folder, no listing.
    for (const path of ['/js/', '/js/../../package.json', '/%2e%2e/serve-page.js', '/js/..%2f..%2fserve-page.js', '/index.html/']) {
      expect((await get(path)).status, path).toBe(404);
    }
  });

  it('filters events and stories by participant and place, refusing overlong filters', async () => {
    const events = (await get('/api/events?place=Dunvessel&limit=200')).body;
    expect(events.total).toBeGreaterThan(0);
    for (const e of events.events) expect(e.places.some((p: string) => /dunvessel/i.test(p))).toBe(true);
    const stories = (await get('/api/stories?participant=maskell&limit=200')).body;
    expect(stories.total).toBeGreaterThan(0);
    expect(stories.total).toBeLessThan((await get('/api/stories?limit=1')).body.total);
    const r = await get(`/api/events?participant=${'x'.repeat(201)}`);
    expect([r.status, r.body.error.code]).toEqual([400, 'STRAND_REQUEST_INVALID']);
  });

  it("shows the links that cross a story's edge, each with evidence saying it crossed", async () => {
    const stories = (await get('/api/stories?limit=200')).body.stories as { id: string }[];
    const crossing = [];
    for (const s of stories)
      crossing.push(...(await get(`/api/stories/${s.id}`)).body.crossLinks.map((c: object) => ({ story: s.id, ...c })));
    // The demo has stories that refer back to others (the bridge inquiry to the bridge collapse).
    expect(crossing.length).toBeGreaterThan(0);
    for (const c of crossing) {
      expect(c.evidence.crossStory).toBe(true);
      expect(['in', 'out']).toContain(c.direction);
      const event = (await get(`/api/events/${c.eventId}`)).body.event;
      // In: the event is this story's and the sentence's article another's; out: the other way round.
      const articleStory = (await get(`/api/articles/${encodeURIComponent(c.articleId)}`)).body.article.story;
      if (c.direction === 'in') expect([event.story, articleStory === c.story]).toEqual([c.story, false]);
      else expect([articleStory, event.story === c.story]).toEqual([c.story, false]);
    }
  });

  it('lists outlets and dead letters', async () => {
    expect((await get('/api/outlets')).body.outlets).toHaveLength(6);
    expect((await get('/api/webhooks/dead-letters')).body.deliveries).toEqual([]);
  });
});
