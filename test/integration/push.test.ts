import type { FastifyInstance } from 'fastify';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { LocalIntake } from '../../src/local-intake.js';
import { createLogger } from '../../src/logger.js';
import type { Article } from '../../src/records.js';
import type { Runtime } from '../../src/runtime.js';
import { testRuntime } from '../helpers/runtime.js';

const idle = () => ({ state: 'idle' as const, processed: 0, total: 0, stored: 0, rejected: 0 });
const limits = { maxArticleChars: 5000, maxPushItems: 6, maxPushBytes: 64 * 1024 };

const item = (id: string, extra: Record<string, unknown> = {}) => ({
  id: `https://harbourline.example/news/${id}`,
  outlet: 'Harbourline Daily',
  title: 'Levee fails at Dunvessel',
  published: '2026-10-05T08:00:00Z',
  text: 'The levee at Dunvessel failed on Saturday night, flooding forty homes.',
  ...extra,
});

describe('pushing articles to POST /api/articles', () => {
  let rt: Runtime;
  let app: FastifyInstance;
  let submitted: Article[][];

  beforeEach(async () => {
    rt = await testRuntime();
    submitted = [];
    app = await buildApp({
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: idle,
      push: { submit: async (a) => void submitted.push([...a]), limits },
    });
  });
  afterEach(async () => {
    await app.close();
    await rt.close();
  });

  const post = (payload: string, type = 'application/json') =>
    app.inject({ method: 'POST', url: '/api/articles', headers: { 'content-type': type }, payload });

  it('accepts one JSON article and hands it on normalised', async () => {
    const r = await post(JSON.stringify(item('a1')));
    expect(r.statusCode).toBe(200);
    expect(r.json()).toEqual({
      accepted: 1,
      duplicates: 0,
      rejected: 0,
      results: [{ index: 0, id: 'https://harbourline.example/news/a1', status: 'accepted', reason: null }],
    });
    expect(submitted[0]![0]).toMatchObject({
      id: 'https://harbourline.example/news/a1',
      outlet: 'Harbourline Daily',
      published: '2026-10-05T08:00:00.000Z',
      source: expect.stringMatching(/^push:/),
    });
  });

  it('gives each NDJSON line its own result: accepted, duplicate or rejected with the reason', async () => {
    const lines = [
      JSON.stringify(item('b1')),
      JSON.stringify(item('b1')),
      '{"id": "broken"',
      JSON.stringify(item('b2', { published: 'next Tuesday-ish' })),
      JSON.stringify({ ...item('b3'), __proto__: null, extra: 1 }),
      '',
      JSON.stringify(item('b4', { text: 'x'.repeat(6000) })),
    ].join('\n');
    const r = await post(lines, 'application/x-ndjson');
    expect(r.statusCode).toBe(200);
    const body = r.json();
    expect(body.results.map((x: { status: string }) => x.status)).toEqual([
      'accepted',
      'duplicate',
      'rejected',
      'rejected',
      'rejected',
      'rejected',
    ]);
    expect(body.results[1].reason).toBe('earlier in this request');
    expect(body.results[2].reason).toMatch(/STRAND_ARTICLE_INVALID: line 3 is not valid JSON/);
    expect(body.results[3].reason).toMatch(/published "next Tuesday-ish" is not a date/);
    expect(body.results[4].reason).toMatch(/extra/);
    expect(body.results[5].reason).toMatch(/STRAND_ARTICLE_TOO_LARGE/);
    expect(submitted.flat().map((a) => a.id)).toEqual(['https://harbourline.example/news/b1']);
  });

  it('refuses a body with a __proto__ or constructor key, saying why, in JSON and in NDJSON alike', async () => {
    for (const [payload, key] of [
      ['{"__proto__": {"polluted": true}, "id": "a"}', '"__proto__"'],
      ['[{"id": "a", "constructor": {"prototype": {"polluted": true}}}]', '"constructor" with a "prototype"'],
    ] as const) {
      const r = await post(payload);
      expect(r.statusCode).toBe(400);
      expect(r.json().error).toEqual({
        code: 'STRAND_REQUEST_INVALID',
        message: `the body was refused: it has a ${key} key, which could change the prototype of the objects it is read into (prototype poisoning); rename or remove that key`,
      });
    }
    const r = await post(`${JSON.stringify(item('p1'))}\n{"__proto__": {"polluted": true}}`, 'application/x-ndjson');
    expect(r.json().results.map((x: { status: string; reason: string | null }) => [x.status, x.reason])).toEqual([
      ['accepted', null],
      ['rejected', expect.stringMatching(/^STRAND_ARTICLE_INVALID: line 2 was refused: it has a "__proto__" key/)],
    ]);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
  });

  it('refuses publication dates outside the window, saying which limit they break', async () => {
    const r = await post(
      JSON.stringify([
        item('d1', { published: '0001-01-01T00:00:00Z' }),
        item('d2', { published: '9999-12-31T00:00:00Z' }),
        item('d3', { published: '+275760-09-13T00:00:00Z' }),
      ]),
    );
    expect(r.json().results.map((x: { status: string; reason: string }) => [x.status, x.reason])).toEqual([
      ['rejected', expect.stringMatching(/published "0001-01-01T00:00:00Z" is more than ingest.publishedPastDays \(36500\) before now/)],
      ['rejected', expect.stringMatching(/published "9999-12-31T00:00:00Z" is more than ingest.publishedAheadHours \(48\) after now/)],
      ['rejected', expect.stringMatching(/published "\+275760-09-13T00:00:00Z" is not a date/)],
    ]);
  });

  it('reports an article already stored as a duplicate', async () => {
    const intake = new LocalIntake(rt);
    const app2 = await buildApp({
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: idle,
      push: { submit: (a) => intake.submit(a), limits },
    });
    try {
      const first = await app2.inject({ method: 'POST', url: '/api/articles', payload: [item('c1')] });
      expect(first.json().accepted).toBe(1);
      await intake.idle();
      expect(await rt.store.hasArticle('https://harbourline.example/news/c1')).toBe(true);
      expect((await rt.store.getArticle('https://harbourline.example/news/c1'))!.sentences.length).toBeGreaterThan(0);
      const again = await app2.inject({ method: 'POST', url: '/api/articles', payload: [item('c1')] });
      expect(again.json().results[0]).toMatchObject({ status: 'duplicate', reason: 'already stored' });
    } finally {
      await app2.close();
    }
  });

  it.each([
    ['a body that is not JSON', 'not json', 'application/json', 400],
    ['a JSON body that pollutes prototypes', '{"__proto__": {"x": 1}, "id": "p"}', 'application/json', 400],
    ['an empty batch', '[]', 'application/json', 400],
    ['more articles than ingest.maxPushItems', JSON.stringify(Array.from({ length: 7 }, (_, i) => item(`m${i}`))), 'application/json', 400],
    ['a body over ingest.maxPushBytes', JSON.stringify(item('big', { text: 'y'.repeat(70 * 1024) })), 'application/json', 413],
    ['a body that is neither JSON nor NDJSON', 'id=1', 'application/x-www-form-urlencoded', 415],
  ])('refuses %s as a whole, with a clear error and nothing handed on', async (_name, payload, type, status) => {
    const r = await post(payload, type);
    expect(r.statusCode).toBe(status);
    expect(r.json().error.message.length).toBeGreaterThan(5);
    expect(submitted).toEqual([]);
  });

  it('is described in the OpenAPI document', async () => {
    expect((await app.inject('/openapi.json')).json().paths['/api/articles'].post).toBeDefined();
  });
});

describe('the local intake', () => {
  it('runs pushed batches one after another and after a replay holding the pipeline', async () => {
    const rt = await testRuntime();
    const order: string[] = [];
    const intake = new LocalIntake(rt, (o) => order.push(o.articleId));
    try {
      let release!: () => void;
      const replay = intake.exclusive(() =>
        new Promise<void>((r) => {
          release = r;
        }).then(() => {
          order.push('replay done');
        }),
      );
      const base = {
        outlet: 'O',
        url: null,
        title: 't',
        published: '2026-10-05T08:00:00.000Z',
        fetched: '2026-10-05T08:00:00.000Z',
        language: null,
        duplicateOf: null,
        source: 'test',
      };
      await intake.submit([{ ...base, id: 'p1', text: 'The levee failed on Saturday.', contentHash: 'h1' }]);
      await intake.submit([{ ...base, id: 'p2', text: 'The bridge fell on Sunday.', contentHash: 'h2' }]);
      // Both pushes were accepted while the replay held the pipeline; the order below shows
      // they ran only after it (a push that ran first would come before "replay done").
      release();
      await replay;
      await intake.idle();
      expect(order).toEqual(['replay done', 'p1', 'p2']);
    } finally {
      await rt.close();
    }
  });
});
