/**
 * Serves the analysts' page: three static files read once at registration. The page is
 * plain HTML, CSS and JavaScript that reads the same public API as any other client.
 */
import { readFileSync } from 'node:fs';
import type { FastifyInstance } from 'fastify';

const FILES = [
  { route: '/', file: 'index.html', type: 'text/html; charset=utf-8' },
  { route: '/app.js', file: 'app.js', type: 'text/javascript; charset=utf-8' },
  { route: '/style.css', file: 'style.css', type: 'text/css; charset=utf-8' },
] as const;

/** Registers the page's routes. */
export function registerWebPage(app: FastifyInstance): void {
  for (const { route, file, type } of FILES) {
    const body = readFileSync(new URL(`./static/${file}`, import.meta.url));
    app.get(route, { schema: { hide: true } }, async (_req, reply) =>
      reply
        .type(type)
        .header('cache-control', 'no-cache')
        // The page loads nothing from elsewhere and never evaluates fetched text as code.
        .header(
          'content-security-policy',
          "default-src 'self'; img-src 'self' data:; style-src 'self'; script-src 'self'; connect-src 'self'; frame-ancestors 'none'",
        )
        .header('x-content-type-options', 'nosniff')
        .send(body),
    );
  }
}
