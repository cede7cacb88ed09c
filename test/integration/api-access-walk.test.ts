import type { FastifyInstance } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { GRANTS, SCOPES } from '../../src/api/access.js';
import { createLogger } from '../../src/logger.js';
import { openSqliteStore, type SqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import type { Scope } from '../../src/store/store.js';

const OPERATOR = 'k7Qz2mVw9XcB4nRt8LpY3sHd6FgJ1aEu';
const idle = () => ({ state: 'idle' as const, processed: 0, total: 0, stored: 0, rejected: 0 });
const none = async () => undefined;

/** An operation of the OpenAPI document, with the scope it says it needs (null: open). */
interface Operation {
  method: string;
  path: string;
  scope: Scope | null;
}

/** The narrowest scope that does not grant `need`: the "too small" key for an operation. */
function tooSmall(need: Scope): Scope {
  return SCOPES.find((s) => !GRANTS[s].includes(need))!;
}

describe('access by scope, walking the OpenAPI document', () => {
  let store: SqliteStore;
  let app: FastifyInstance;
  const keys = new Map<Scope, string>();
  let operations: Operation[];

  beforeAll(async () => {
    store = openSqliteStore(':memory:');
    app = await buildApp({
      store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: idle,
      // Every optional group of routes, so the walk covers them all.
      push: { submit: none, limits: { maxArticleChars: 5000, maxPushItems: 6, maxPushBytes: 64 * 1024 } },
      feeds: { list: () => [], add: none, update: none, remove: async () => false } as never,
      queue: { depth: async () => ({ intake: 0, analysed: 0, deadLetters: 0 }), deadLetters: async () => [] },
      linkSettings: { threshold: 0.2, calibration: 'stream' },
      auth: { tokens: [OPERATOR], protect: 'everything' },
    });
    const admin = { authorization: `Bearer ${OPERATOR}` };
    for (const scope of SCOPES) {
      const made = await app.inject({
        method: 'POST',
        url: '/api/keys',
        headers: admin,
        payload: { name: `${scope} key`, scopes: [scope] },
      });
      expect(made.statusCode).toBe(201);
      keys.set(scope, made.json().key);
    }
    const doc = (await app.inject({ url: '/openapi.json' })).json() as {
      paths: Record<string, Record<string, { security?: Record<string, string[]>[] }>>;
    };
    operations = Object.entries(doc.paths).flatMap(([path, ops]) =>
      Object.entries(ops).map(([method, op]) => ({
        method: method.toUpperCase(),
        path,
        scope: (op.security?.find((s) => s.bearer)?.bearer?.[0] as Scope | undefined) ?? null,
      })),
    );
  });
  afterAll(async () => {
    await app.close();
    await store.close();
  });

  /** A request to the operation: path parameters filled, a query that stops the stream at once (400 after the check). */
  const request = (op: Operation, key?: string) =>
    app.inject({
      method: op.method as 'GET',
      url: op.path.replace(/\{[^}]+\}/g, 'key_000000000000') + (op.path === '/api/stream' ? '?types=none' : ''),
      headers: key ? { authorization: `Bearer ${key}` } : {},
      ...(op.method === 'GET' || op.method === 'DELETE' ? {} : { payload: {} }),
    });

  it('names a scope for every operation under /api/ but the health check', () => {
    expect(operations.length).toBeGreaterThan(20);
    const open = operations.filter((o) => o.scope === null).map((o) => `${o.method} ${o.path}`);
    expect(open).toEqual(['GET /api/health', 'GET /metrics']);
  });

  it('refuses every protected operation without a key (401), with a key of too small a scope (403), and lets the right one through', async () => {
    const seen: string[] = [];
    for (const op of operations.filter((o) => o.scope !== null)) {
      const what = `${op.method} ${op.path}`;
      const without = await request(op);
      expect([without.statusCode, without.json().error.code], what).toEqual([401, 'STRAND_UNAUTHORIZED']);
      const small = await request(op, keys.get(tooSmall(op.scope!)));
      expect([small.statusCode, small.json().error.code], what).toEqual([403, 'STRAND_FORBIDDEN']);
      const right = await request(op, keys.get(op.scope!));
      expect([401, 403], `${what}: ${right.body.slice(0, 200)}`).not.toContain(right.statusCode);
      seen.push(what);
    }
    expect(seen).toContain('POST /api/articles');
    expect(seen).toContain('DELETE /api/keys/{id}');
    expect(seen).toContain('POST /api/link-threshold/rollback');
  });

  it('lets a wider scope do what a narrower one may: admin everything, manage reads too, push nothing else', async () => {
    const events = { method: 'GET', path: '/api/events', scope: 'read' } as const;
    expect((await request(events, keys.get('manage'))).statusCode).toBe(200);
    expect((await request(events, keys.get('admin'))).statusCode).toBe(200);
    expect((await request(events, keys.get('push'))).statusCode).toBe(403);
  });

  it('stores no key, only its hash, and refuses a revoked key', async () => {
    const listed = await store.listApiKeys();
    for (const key of keys.values()) expect(JSON.stringify(listed)).not.toContain(key);
    const doomed = (
      await app.inject({
        method: 'POST',
        url: '/api/keys',
        headers: { authorization: `Bearer ${OPERATOR}` },
        payload: { name: 'doomed', scopes: ['read'] },
      })
    ).json();
    expect((await app.inject({ url: '/api/events', headers: { authorization: `Bearer ${doomed.key}` } })).statusCode).toBe(200);
    const revoked = await app.inject({ method: 'DELETE', url: `/api/keys/${doomed.id}`, headers: { authorization: `Bearer ${OPERATOR}` } });
    expect(revoked.statusCode).toBe(204);
    expect((await app.inject({ url: '/api/events', headers: { authorization: `Bearer ${doomed.key}` } })).statusCode).toBe(401);
  });

  it('checks closed, not open, when the keys cannot be read', async () => {
    const blind = openSqliteStore(':memory:');
    blind.listApiKeys = async () => {
      throw new Error('store unreachable');
    };
    // The store says so, as a Redis store does while its server is away.
    blind.unavailable = (err?: unknown) => err instanceof Error && err.message === 'store unreachable';
    const guarded = await buildApp({ store: blind, logger: createLogger('silent'), version: 'test', ingestStatus: idle });
    const r = await guarded.inject({ method: 'POST', url: '/api/subscriptions', payload: { name: 'x', url: 'https://desk.example/hook' } });
    expect([r.statusCode, r.json().error.code]).toEqual([503, 'STRAND_STORE_UNAVAILABLE']);
    expect(await blind.listSubscriptions()).toEqual([]);
    await guarded.close();
    await blind.close();
  });

  it('refuses malformed key requests with a clear error', async () => {
    const admin = { authorization: `Bearer ${OPERATOR}` };
    for (const payload of [
      { name: 'x', scopes: [] },
      { name: 'x', scopes: ['root'] },
      { name: '', scopes: ['read'] },
      { name: 'x\u0000', scopes: ['read'] },
      { name: 'x', scopes: ['read', 'read'] },
    ]) {
      const r = await app.inject({ method: 'POST', url: '/api/keys', headers: admin, payload });
      expect([r.statusCode, r.json().error.code], JSON.stringify(payload)).toEqual([400, 'STRAND_REQUEST_INVALID']);
    }
    expect((await app.inject({ method: 'DELETE', url: '/api/keys/../../etc', headers: admin })).statusCode).toBe(404);
  });
});
