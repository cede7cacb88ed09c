import { afterEach, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../src/api/build-app.js';
import { parseConfig } from '../../src/config/load-config.js';
import { createLogger } from '../../src/logger.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';

const TOKEN_A = 'a'.repeat(40);
const TOKEN_B = 'b'.repeat(40);

async function app(access: { requestsPerMinute: number; corsOrigins: string[] }): Promise<FastifyInstance> {
  return buildApp({
    store: openSqliteStore(':memory:'),
    logger: createLogger('silent'),
    version: 'test',
    ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
    access,
  });
}

describe('rate limits and browser origins', () => {
  let a: FastifyInstance;
  afterEach(async () => a.close());

  it('answers 429 with Retry-After and the reason once a client passes its requests a minute, each client counted apart', async () => {
    a = await app({ requestsPerMinute: 3, corsOrigins: [] });
    const ask = (auth?: string) => a.inject({ url: '/api/events', headers: auth ? { authorization: `Bearer ${auth}` } : {} });
    for (let i = 0; i < 3; i++) expect((await ask()).statusCode).toBe(200);
    const refused = await ask();
    expect(refused.statusCode).toBe(429);
    expect(Number(refused.headers['retry-after'])).toBeGreaterThan(0);
    expect(refused.json().error).toEqual({
      code: 'STRAND_RATE_LIMITED',
      message: expect.stringMatching(/more than 3 requests a minute; retry in/),
    });
    // A script with its own token has its own budget, as has another token.
    expect((await ask(TOKEN_A)).statusCode).toBe(200);
    expect((await ask(TOKEN_B)).statusCode).toBe(200);
    expect((await ask(TOKEN_A)).headers['x-ratelimit-remaining']).toBe('1');
  });

  it('lets only the configured origins call from a browser', async () => {
    a = await app({ requestsPerMinute: 0, corsOrigins: ['https://desk.example'] });
    const preflight = (origin: string) =>
      a.inject({ method: 'OPTIONS', url: '/api/events', headers: { origin, 'access-control-request-method': 'GET' } });
    expect((await preflight('https://desk.example')).headers['access-control-allow-origin']).toBe('https://desk.example');
    expect((await preflight('https://elsewhere.example')).headers['access-control-allow-origin']).toBeUndefined();
    const get = await a.inject({ url: '/api/events', headers: { origin: 'https://desk.example' } });
    expect(get.headers['access-control-allow-origin']).toBe('https://desk.example');
  });

  it('sends no CORS headers and counts nothing by default', async () => {
    a = await app({ requestsPerMinute: 0, corsOrigins: [] });
    const get = await a.inject({ url: '/api/events', headers: { origin: 'https://desk.example' } });
    expect(get.headers['access-control-allow-origin']).toBeUndefined();
    expect(get.headers['x-ratelimit-limit']).toBeUndefined();
  });

  it('refuses an origin that is not a URL, or a negative limit, at start-up with the key named', () => {
    expect(() => parseConfig({ server: { corsOrigins: ['desk.example'] } })).toThrow(/server\.corsOrigins/);
    expect(() => parseConfig({ server: { requestsPerMinute: -1 } })).toThrow(/server\.requestsPerMinute/);
    expect(parseConfig({}).server).toMatchObject({ requestsPerMinute: 600, corsOrigins: [] });
  });
});
