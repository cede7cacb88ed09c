/**
 * Bearer tokens for the API (RFC 6750). With `server.tokens` set, requests that change
 * something (POST, PUT, PATCH, DELETE under /api/) need `Authorization: Bearer <token>`;
 * with `server.protect: everything`, reads under /api/ need it too, since they return stored
 * article text. The page and its files, the OpenAPI document and /api/health (for
 * orchestrators' liveness checks; counts only) stay open. No tokens: nothing is checked,
 * which suits the default loopback-only listener.
 */
import { createHash, timingSafeEqual } from 'node:crypto';
import type { FastifyInstance, FastifyRequest } from 'fastify';
import { StrandError } from '../errors.js';

/** Which requests need a token. */
export interface TokenPolicy {
  tokens: readonly string[];
  protect: 'changes' | 'everything';
}

const READS = new Set(['GET', 'HEAD', 'OPTIONS']);
const OPEN = new Set(['/api/health']);

/** True when this request needs a token under the policy. */
export function needsToken(policy: TokenPolicy, method: string, path: string): boolean {
  if (policy.tokens.length === 0 || !path.startsWith('/api/') || OPEN.has(path)) return false;
  return policy.protect === 'everything' || !READS.has(method);
}

/** Adds the check to every route of the app. */
export function registerTokenCheck(app: FastifyInstance, policy: TokenPolicy): void {
  if (policy.tokens.length === 0) return;
  // Digests have one length, so timingSafeEqual compares them in constant time whatever was sent.
  const digests = policy.tokens.map(digest);
  app.addHook('onRequest', async (req: FastifyRequest, reply) => {
    // The matched route, not the raw URL: an encoded or oddly written path that reaches a
    // route must not slip past the check.
    if (!needsToken(policy, req.method, req.routeOptions.url ?? req.url.split('?')[0]!)) return;
    const presented = /^Bearer +([\x21-\x7e]+) *$/i.exec(req.headers.authorization ?? '')?.[1];
    if (presented !== undefined) {
      const d = digest(presented);
      let ok = false;
      for (const t of digests) ok = timingSafeEqual(d, t) || ok;
      if (ok) return;
    }
    reply.header(
      'www-authenticate',
      presented === undefined ? 'Bearer realm="strandline"' : 'Bearer realm="strandline", error="invalid_token"',
    );
    throw new StrandError(
      'STRAND_UNAUTHORIZED',
      presented === undefined ? 'this request needs a token: send Authorization: Bearer <token>' : 'the token is not one of server.tokens',
    );
  });
}

function digest(token: string): Buffer {
  return createHash('sha256').update(token).digest();
}
