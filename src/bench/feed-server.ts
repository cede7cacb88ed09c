/**
 * A local HTTP server of generated RSS feeds, for the polling tests and benchmark. Each
 * feed has a version; its ETag and Last-Modified follow the version, and conditional
 * requests are answered as RFC 9110 (13.1) says: If-None-Match first (If-Modified-Since
 * is then ignored), else If-Modified-Since; a match gets 304 with no body.
 */
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';

/** Counts of what the server answered. */
export interface ServedCounts {
  requests: number;
  ok: number;
  notModified: number;
  other: number;
  bytes: number;
}

/** Answers for special paths (tests of failures). */
export type SpecialRoute = (req: IncomingMessage, res: ServerResponse) => void;

export interface FeedServer {
  url(path: string): string;
  /** Publishes one more item in feed `i` (its validators change). */
  publish(i: number): void;
  counts(): ServedCounts;
  resetCounts(): void;
  close(): Promise<void>;
}

const EPOCH = Date.UTC(2026, 9, 1, 6, 0, 0);

/** Starts a server of `feeds` feeds, at /feeds/<i>.xml, with `items` items each at first. */
export async function startFeedServer(feeds: number, items: number, special: Record<string, SpecialRoute> = {}): Promise<FeedServer> {
  const versions = new Array<number>(feeds).fill(items);
  let counts: ServedCounts = { requests: 0, ok: 0, notModified: 0, other: 0, bytes: 0 };
  const server: Server = createServer((req, res) => {
    counts.requests++;
    const path = (req.url ?? '/').split('?')[0]!;
    const route = special[path];
    if (route) {
      counts.other++;
      return route(req, res);
    }
    const m = /^\/feeds\/(\d+)\.xml$/.exec(path);
    const i = m ? Number(m[1]) : -1;
    if (i < 0 || i >= feeds) {
      counts.other++;
      res.writeHead(404).end();
      return;
    }
    const version = versions[i]!;
    const etag = `"f${i}-v${version}"`;
    const modified = new Date(EPOCH + version * 60_000);
    const lastModified = modified.toUTCString();
    const inm = req.headers['if-none-match'];
    const ims = req.headers['if-modified-since'];
    const fresh =
      inm !== undefined
        ? inm
            .split(',')
            .map((t) => t.trim())
            .includes(etag)
        : ims !== undefined && Date.parse(ims) >= modified.getTime();
    if (fresh) {
      counts.notModified++;
      res.writeHead(304, { etag, 'last-modified': lastModified }).end();
      return;
    }
    const body = rss(i, version);
    counts.ok++;
    counts.bytes += Buffer.byteLength(body);
    res.writeHead(200, { 'content-type': 'application/rss+xml; charset=utf-8', etag, 'last-modified': lastModified }).end(body);
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const port = (server.address() as AddressInfo).port;
  return {
    url: (path) => `http://127.0.0.1:${port}${path}`,
    publish: (i) => {
      versions[i]!++;
    },
    counts: () => ({ ...counts }),
    resetCounts: () => {
      counts = { requests: 0, ok: 0, notModified: 0, other: 0, bytes: 0 };
    },
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}

/** The latest ten items of feed `i` at `version` (items numbered from 1). */
function rss(i: number, version: number): string {
  const items: string[] = [];
  for (let n = version; n > Math.max(0, version - 10); n--) {
    const when = new Date(EPOCH + n * 60_000).toUTCString();
    items.push(
      `<item><title>Harbour report ${i}.${n}</title><link>https://outlet${i}.example/news/${n}</link><guid>https://outlet${i}.example/news/${n}</guid>` +
        `<pubDate>${when}</pubDate><description>The Vellmouth harbour board met on Tuesday and approved dredging of berth ${n} at the Korrin pier, outlet ${i} reported.</description></item>`,
    );
  }
  return (
    `<?xml version="1.0" encoding="UTF-8"?><rss version="2.0"><channel><title>Outlet ${i} Harbour Desk</title><link>https://outlet${i}.example/</link>` +
    `<description>Harbour news</description>${items.join('')}</channel></rss>`
  );
}
