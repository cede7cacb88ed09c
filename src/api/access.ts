/**
 * Who may do what through the API: bearer tokens (RFC 6750) that are either the operator's
 * (`server.tokens`, which may do everything) or API keys with scopes, made through the API
 * or the command line and stored as SHA-256 hashes. Each request needs one scope, decided by
 * its method and the route it reaches (requiredScope); a scope grants others (GRANTS).
 * Without operator tokens or keys nothing is checked, which suits the default loopback-only
 * listener. The page and its files, the OpenAPI document, /api/health and /metrics (counts
 * only) stay open.
 */
import { createHash, randomBytes } from 'node:crypto';
import type { FastifyInstance, FastifyRequest } from 'fastify';
import { StrandError } from '../errors.js';
import type { ApiKey, ApiKeys, Scope } from '../store/store.js';

/** The scopes, from narrowest to widest. */
export const SCOPES: readonly Scope[] = ['read', 'push', 'manage', 'admin'];

/** What a key of each scope may do: push is for feeding systems and reads nothing back. */
export const GRANTS: Readonly<Record<Scope, readonly Scope[]>> = {
  read: ['read'],
  push: ['push'],
  manage: ['read', 'manage'],
  admin: ['read', 'push', 'manage', 'admin'],
};

/** Which requests need a key under the operator's settings. */
export interface AccessPolicy {
  /** The operator's tokens: each may do everything. */
  tokens: readonly string[];
  /** `changes`: reads of events, stories and articles are open; `everything`: they need `read`. */
  protect: 'changes' | 'everything';
}

const READS = new Set(['GET', 'HEAD', 'OPTIONS']);
const OPEN = new Set(['/api/health']);
/** Reads of the operator's own settings (webhook targets, delivery logs), protected like changes. */
const OPERATOR_READS = ['/api/subscriptions', '/api/webhooks/', '/api/reviews'];

/** The scope a request to this route needs, or null when it is open under the policy. */
export function requiredScope(protect: AccessPolicy['protect'], method: string, route: string): Scope | null {
  if (!route.startsWith('/api/') || OPEN.has(route)) return null;
  if (route === '/api/keys' || route.startsWith('/api/keys/')) return 'admin';
  if (OPERATOR_READS.some((p) => route.startsWith(p))) return 'manage';
  if (READS.has(method)) return protect === 'everything' ? 'read' : null;
  if (method === 'POST' && route === '/api/articles') return 'push';
  return 'manage';
}

/** A new key: what is stored (its hash) and the key itself, to hand over once. */
export function newApiKey(name: string, scopes: readonly Scope[], now: Date): { record: ApiKey; key: string } {
  const key = `stl_${randomBytes(32).toString('base64url')}`;
  const record: ApiKey = {
    id: `key_${randomBytes(6).toString('hex')}`,
    name,
    scopes: SCOPES.filter((s) => scopes.includes(s)),
    hash: digest(key),
    created: now.toISOString(),
  };
  return { record, key };
}

/** Who presented a token: an operator token, or a key with its scopes. */
interface Holder {
  id: string;
  scopes: readonly Scope[];
}

/** How long the keys read from the store are used before they are read again (a key revoked elsewhere stops within this). */
const KEYS_FRESH_MS = 1000;
/** An unknown key makes the keys be read again, at most this often (a key made elsewhere works at once). */
const MISS_REREAD_MS = 100;

/**
 * The keys as this process knows them: read from the store (which every api process
 * shares) and read again after a second, after a change made here, and on an unknown key.
 */
export class KeyRing {
  private known = new Map<string, Holder>();
  private readAt = -Infinity;
  private everRead = false;

  constructor(private readonly store: Pick<ApiKeys, 'listApiKeys'>) {}

  /** The holder of this key, or undefined. */
  async find(key: string): Promise<Holder | undefined> {
    const hash = digest(key);
    await this.refresh(KEYS_FRESH_MS);
    if (!this.known.has(hash)) await this.refresh(MISS_REREAD_MS);
    // Looked up by SHA-256: timing can tell at most something of a hash, never of a key.
    return this.known.get(hash);
  }

  /** True when any key is stored. */
  async any(): Promise<boolean> {
    await this.refresh(KEYS_FRESH_MS);
    return this.known.size > 0;
  }

  /** Forgets what was read (a key was made or revoked here). */
  changed(): void {
    this.readAt = -Infinity;
  }

  private async refresh(olderThanMs: number): Promise<void> {
    if (performance.now() - this.readAt <= olderThanMs) return;
    // A store that cannot be read keeps the keys read last (the request then fails on the
    // store anyway); before any were read it checks closed, never open.
    const stored = await this.store.listApiKeys().catch((err: unknown) => {
      // Thrown as it came: the app answers a store that cannot be reached with its usual 503.
      if (!this.everRead) throw err;
      return null;
    });
    if (!stored) return;
    this.everRead = true;
    this.known = new Map(stored.map((k) => [k.hash, { id: k.id, scopes: k.scopes }]));
    this.readAt = performance.now();
  }
}

declare module 'fastify' {
  interface FastifyRequest {
    /** Who the request came from (an API key's id, or which of server.tokens); null when nothing was checked. */
    keyId: string | null;
  }
}

/** Adds the check to every route of the app. */
export function registerAccessCheck(app: FastifyInstance, policy: AccessPolicy, keys: KeyRing): void {
  app.decorateRequest('keyId', null);
  const operators = new Map(policy.tokens.map((t, i) => [digest(t), { id: `server.tokens[${i}]`, scopes: ['admin'] as Scope[] }]));

  // Each operation's scope goes into the OpenAPI document, as the bearer scheme's scope.
  app.addHook('onRoute', (route) => {
    if (!route.schema || typeof route.method !== 'string') return;
    const need = requiredScope(policy.protect, route.method, route.url);
    route.schema = { ...route.schema, security: need === null ? [{}] : [{ bearer: [need] }] } as typeof route.schema;
  });

  app.addHook('onRequest', async (req: FastifyRequest, reply) => {
    // The matched route, not the raw URL: an encoded or oddly written path that reaches a
    // route must not slip past the check.
    const route = req.routeOptions.url ?? req.url.split('?')[0]!;
    const need = requiredScope(policy.protect, req.method, route);
    if (need === null) return;
    if (operators.size === 0 && !(await keys.any())) return;
    const presented = /^Bearer +([\x21-\x7e]+) *$/i.exec(req.headers.authorization ?? '')?.[1];
    const holder = presented === undefined ? undefined : (operators.get(digest(presented)) ?? (await keys.find(presented)));
    if (!holder) {
      reply.header(
        'www-authenticate',
        presented === undefined ? 'Bearer realm="strandline"' : 'Bearer realm="strandline", error="invalid_token"',
      );
      throw new StrandError(
        'STRAND_UNAUTHORIZED',
        presented === undefined
          ? 'this request needs a key: send Authorization: Bearer <key>'
          : 'the key is not known (revoked, or never made)',
      );
    }
    if (!holder.scopes.some((s) => GRANTS[s].includes(need))) {
      reply.header('www-authenticate', `Bearer realm="strandline", error="insufficient_scope", scope="${need}"`);
      throw new StrandError('STRAND_FORBIDDEN', `${holder.id} has scope ${holder.scopes.join(', ')}; ${req.method} ${route} needs ${need}`);
    }
    req.keyId = holder.id;
  });
}

function digest(token: string): string {
  return createHash('sha256').update(token).digest('hex');
}
