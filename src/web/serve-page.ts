/**
 * Serves the desk page: the static files under static/, read once at registration. The page
 * is plain HTML, CSS and JavaScript modules that read the same public API as any other
 * client; nothing is loaded from elsewhere.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { extname, join, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { FastifyInstance } from 'fastify';

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.svg': 'image/svg+xml',
};

// The page loads nothing from elsewhere and never evaluates fetched text as code.
const POLICY = "default-src 'self'; img-src 'self' data:; style-src 'self'; script-src 'self'; connect-src 'self'; frame-ancestors 'none'";

/** Every servable file under a folder, as [route, absolute path]. */
function filesUnder(root: string): [string, string][] {
  const found: [string, string][] = [];
  for (const entry of readdirSync(root, { withFileTypes: true, recursive: true })) {
    if (!entry.isFile() || !TYPES[extname(entry.name)]) continue;
    const path = join(entry.parentPath, entry.name);
    found.push([`/${relative(root, path).split(sep).join('/')}`, path]);
  }
  return found;
}

/** Registers the page's routes: / for index.html, and each other file at its own path. */
export function registerWebPage(app: FastifyInstance): void {
  const root = fileURLToPath(new URL('./static/', import.meta.url));
  for (const [route, path] of filesUnder(root)) {
    const body = readFileSync(path);
    const type = TYPES[extname(path)]!;
    app.get(route === '/index.html' ? '/' : route, { schema: { hide: true } }, async (_req, reply) =>
      reply
        .type(type)
        .header('cache-control', 'no-cache')
        .header('content-security-policy', POLICY)
        .header('x-content-type-options', 'nosniff')
        .send(body),
    );
  }
}
