import type { FastifyInstance } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { requiredScope } from '../../src/api/access.js';
import { createLogger } from '../../src/logger.js';
import type { Article } from '../../src/records.js';
import type { Runtime } from '../../src/runtime.js';
import { testRuntime } from '../helpers/runtime.js';

const TOKEN = 'k7Qz2mVw9XcB4nRt8LpY3sHd6FgJ1aEu';
const OTHER = 'p0Oi9Uy8Tr7Ee6Ww5Qq4Aa3Ss2Dd1Ff0';
const idle = () => ({ state: 'idle' as const, processed: 0, total: 0, stored: 0, rejected: 0 });
const limits = { maxArticleChars: 5000, maxPushItems: 6, maxPushBytes: 64 * 1024 };
const article = JSON.stringify({
  id: 'https://harbourline.example/news/t1',
  outlet: 'Harbourline Daily',
  title: 'Levee fails at Dunvessel',
  published: '2026-10-05T08:00:00Z',
  text: 'The levee at Dunvessel failed on Saturday night, flooding forty homes.',
});

describe('API tokens (server.tokens)', () => {
  let rt: Runtime;
  let changes: FastifyInstance;
  let everything: FastifyInstance;
  let open: FastifyInstance;
  const submitted: Article[][] = [];

  beforeAll(async () => {
    rt = await testRuntime();
    const base = {
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: idle,
      push: { submit: async (a: readonly Article[]) => void submitted.push([...a]), limits },
    };
    changes = await buildApp({ ...base, auth: { tokens: [OTHER, TOKEN], protect: 'changes' } });
    everything = await buildApp({ ...base, auth: { tokens: [TOKEN], protect: 'everything' } });
    open = await buildApp({ ...base, auth: { tokens: [], protect: 'everything' } });
  });
  afterAll(async () => {
    await Promise.all([changes.close(), everything.close(), open.close()]);
    await rt.close();
  });

  const push = (app: FastifyInstance, authorization?: string) =>
    app.inject({
      method: 'POST',
      url: '/api/articles',
      headers: { 'content-type': 'application/json', ...(authorization === undefined ? {} : { authorization }) },
      payload: article,
    });

  it('refuses a change without a token: 401, the Bearer challenge (RFC 6750 section 3), nothing submitted', async () => {
    const r = await push(changes);
    expect(r.statusCode).toBe(401);
    expect(r.headers['www-authenticate']).toBe('Bearer realm="strandline"');
    expect(r.json().error.code).toBe('STRAND_UNAUTHORIZED');
    expect(submitted).toEqual([]);
  });

  it('refuses an unknown token with error="invalid_token" (RFC 6750 section 3.1)', async () => {
    const r = await push(changes, `Bearer ${TOKEN.slice(0, -1)}X`);
    expect(r.statusCode).toBe(401);
    expect(r.headers['www-authenticate']).toMatch(/error="invalid_token"/);
  });

  it.each([
    ['another scheme', `Basic ${Buffer.from(`x:${TOKEN}`).toString('base64')}`],
    ['the scheme alone', 'Bearer'],
    ['a token with a space in it', `Bearer ${TOKEN.slice(0, 10)} ${TOKEN.slice(10)}`],
    ['a token with a control character', `Bearer ${TOKEN}\u0001`],
    ['an oversized header', `Bearer ${'a'.repeat(8000)}`],
  ])('refuses %s, with a clear error and no crash', async (_name, header) => {
    const r = await push(changes, header);
    expect(r.statusCode).toBe(401);
    expect(r.json().error.code).toBe('STRAND_UNAUTHORIZED');
  });

  it('accepts any configured token, the scheme name in any case (RFC 6750 section 2.1, RFC 7235 section 2.1)', async () => {
    expect((await push(changes, `Bearer ${TOKEN}`)).statusCode).toBe(200);
    expect((await push(changes, `bearer ${OTHER}`)).statusCode).toBe(200);
    expect(submitted).toHaveLength(2);
  });

  it('judges the route a request reaches, not how its path is written', async () => {
    for (const url of ['/%61pi/events', '/api/%65vents', '/api/events/', '/api/events?x=/api/health']) {
      const r = await everything.inject({ url });
      expect([401, 404]).toContain(r.statusCode);
    }
  });

  it('leaves reads open when only changes are protected', async () => {
    expect((await changes.inject({ url: '/api/events' })).statusCode).toBe(200);
  });

  it('protects reads too with protect "everything", but not the page, the OpenAPI document or /api/health', async () => {
    expect((await everything.inject({ url: '/api/events' })).statusCode).toBe(401);
    expect((await everything.inject({ url: '/api/events?q=levee' })).statusCode).toBe(401);
    // The live stream carries sentence text as well.
    expect((await everything.inject({ url: '/api/stream?after=0' })).statusCode).toBe(401);
    expect((await everything.inject({ url: '/api/events', headers: { authorization: `Bearer ${TOKEN}` } })).statusCode).toBe(200);
    expect((await everything.inject({ url: '/api/health' })).statusCode).toBe(200);
    expect((await everything.inject({ url: '/' })).statusCode).toBe(200);
    const doc = await everything.inject({ url: '/openapi.json' });
    expect(doc.statusCode).toBe(200);
    expect(doc.json().components.securitySchemes.bearer).toMatchObject({ type: 'http', scheme: 'bearer' });
  });

  it('checks nothing without tokens', async () => {
    expect((await push(open)).statusCode).toBe(200);
    expect((await open.inject({ url: '/api/events' })).statusCode).toBe(200);
  });

  it('decides by method and route alone', () => {
    expect([
      requiredScope('changes', 'GET', '/api/events'),
      requiredScope('everything', 'GET', '/api/events'),
      requiredScope('changes', 'POST', '/api/articles'),
      requiredScope('changes', 'DELETE', '/api/feeds/:id'),
      requiredScope('changes', 'GET', '/api/subscriptions'),
      requiredScope('changes', 'GET', '/api/keys'),
      requiredScope('everything', 'GET', '/api/health'),
      requiredScope('everything', 'POST', '/app.js'),
    ]).toEqual([null, 'read', 'push', 'manage', 'manage', 'admin', null, null]);
  });
});
