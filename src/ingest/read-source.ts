/**
 * Reads feed documents from files, folders and URLs, within a size cap and a timeout.
 * Each document becomes a list of Articles and a list of problems; a problem in one item
 * or one file never stops the others.
 */
import { open, readdir, stat } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { StrandError, describeError } from '../errors.js';
import type { Article } from '../records.js';
import { decodeBytes } from './decode-bytes.js';
import { parseFeed } from './parse-feed.js';
import { toArticle } from './to-article.js';
import { checkUrlHost, guardedAgent } from './network-guard.js';
import { fetch as undiciFetch } from 'undici';

/** Limits applied while reading. */
export interface ReadLimits {
  maxFeedBytes: number;
  maxArticleChars: number;
  fetchTimeoutMs: number;
  /** Fetch URLs on loopback, private or link-local addresses (default false). */
  allowPrivateNetworks?: boolean;
  /** Redirects followed (default 5). */
  maxRedirects?: number;
}

/** Something that went wrong with one document or one item, kept for the summary. */
export interface IngestProblem {
  source: string;
  /** Item id when the problem concerns one item. */
  item: string | null;
  code: string;
  message: string;
  /** Warnings keep the item; errors drop it (or the whole document). */
  severity: 'warning' | 'error';
}

/** The readable outcome of one feed document. */
export interface FeedDocument {
  source: string;
  outlet: string;
  articles: Article[];
  problems: IngestProblem[];
}

const FEED_FILE = /\.(xml|rss|atom|json|feed)$/i;

/** Lists the feed files under a path: the file itself, or the feed files of a folder tree, sorted. */
export async function listFeedFiles(path: string): Promise<string[]> {
  const abs = resolve(path);
  let info;
  try {
    info = await stat(abs);
  } catch (err) {
    throw new StrandError('STRAND_SOURCE_UNREADABLE', `cannot read ${path}: ${(err as NodeJS.ErrnoException).code ?? describeError(err)}`, { cause: err });
  }
  if (!info.isDirectory()) return [abs];
  const entries = await readdir(abs, { recursive: true, withFileTypes: true });
  return entries
    .filter((e) => e.isFile() && FEED_FILE.test(e.name))
    .map((e) => join(e.parentPath, e.name))
    .sort();
}

/** Reads one file or URL into articles; never throws for bad content, only reports problems. */
export async function readFeedDocument(source: string, limits: ReadLimits, now: () => Date = () => new Date()): Promise<FeedDocument> {
  const doc: FeedDocument = { source, outlet: '', articles: [], problems: [] };
  const fail = (err: unknown, item: string | null = null, severity: 'warning' | 'error' = 'error'): void => {
    doc.problems.push({ source, item, code: err instanceof StrandError ? err.code : 'STRAND_SOURCE_UNREADABLE', message: describeError(err).replace(/^STRAND_[A-Z_]+: /, ''), severity });
  };
  let bytes: Uint8Array;
  let charset: string | null = null;
  try {
    ({ bytes, charset } = /^https?:\/\//i.test(source) ? await fetchBytes(source, limits) : { bytes: await readFileCapped(source, limits.maxFeedBytes), charset: null });
  } catch (err) {
    fail(err);
    return doc;
  }
  try {
    const decoded = decodeBytes(bytes, charset);
    if (decoded.warning) fail(new StrandError('STRAND_ENCODING_UNSUPPORTED', decoded.warning), null, 'warning');
    const feed = parseFeed(decoded.text);
    doc.outlet = feed.title || new URL(feed.link ?? 'https://unknown.invalid/').hostname;
    const fetched = now().toISOString();
    for (const item of feed.items) {
      try {
        const { article, warning } = toArticle(item, { outlet: doc.outlet, source, fetched, maxArticleChars: limits.maxArticleChars });
        if (warning) fail(new StrandError('STRAND_ARTICLE_INVALID', warning), article.id, 'warning');
        doc.articles.push(article);
      } catch (err) {
        fail(err, item.guid ?? item.url ?? item.title.slice(0, 60));
      }
    }
  } catch (err) {
    fail(err);
  }
  return doc;
}

async function readFileCapped(path: string, cap: number): Promise<Uint8Array> {
  const handle = await open(path, 'r').catch((err: NodeJS.ErrnoException) => {
    throw new StrandError('STRAND_SOURCE_UNREADABLE', `cannot read ${path}: ${err.code ?? err.message}`, { cause: err });
  });
  try {
    const { size } = await handle.stat();
    if (size > cap) throw new StrandError('STRAND_SOURCE_TOO_LARGE', `file is ${size} bytes, over ingest.maxFeedBytes (${cap})`);
    const buf = Buffer.alloc(size);
    await handle.read(buf, 0, size, 0);
    return buf;
  } finally {
    await handle.close();
  }
}

async function fetchBytes(url: string, limits: ReadLimits): Promise<{ bytes: Uint8Array; charset: string | null }> {
  const allowPrivate = limits.allowPrivateNetworks ?? false;
  const agent = guardedAgent(allowPrivate);
  try {
    return await fetchWith(agent, url, limits, allowPrivate);
  } finally {
    void agent.close();
  }
}

async function fetchWith(agent: ReturnType<typeof guardedAgent>, url: string, limits: ReadLimits, allowPrivate: boolean): Promise<{ bytes: Uint8Array; charset: string | null }> {
  const signal = AbortSignal.timeout(limits.fetchTimeoutMs);
  let res: Response;
  let at = new URL(url);
  // Redirects are followed here, one by one, so that each target's address is checked too.
  for (let hop = 0; ; hop++) {
    checkUrlHost(at, allowPrivate);
    try {
      res = (await undiciFetch(at, {
        signal,
        dispatcher: agent,
        headers: { accept: 'application/rss+xml, application/atom+xml, application/feed+json, application/xml;q=0.9, */*;q=0.5', 'user-agent': 'Strandline/0.1' },
        redirect: 'manual',
      })) as unknown as Response;
    } catch (err) {
      const cause = (err as Error).cause;
      if (cause instanceof StrandError) throw cause;
      throw new StrandError('STRAND_SOURCE_UNREADABLE', `cannot fetch ${at.href}: ${describeError(cause ?? err)}`, { cause: err });
    }
    const location = res.status >= 300 && res.status < 400 ? res.headers.get('location') : null;
    if (!location) break;
    await res.body?.cancel();
    if (hop >= (limits.maxRedirects ?? 5)) throw new StrandError('STRAND_SOURCE_UNREADABLE', `${url} redirects more than ingest.maxRedirects (${limits.maxRedirects ?? 5}) times`);
    at = new URL(location, at);
    if (!/^https?:$/.test(at.protocol)) throw new StrandError('STRAND_SOURCE_UNREADABLE', `${url} redirects to a ${at.protocol} URL`);
  }
  url = at.href;
  if (!res.ok) throw new StrandError('STRAND_SOURCE_UNREADABLE', `${url} answered HTTP ${res.status}`);
  const declared = Number(res.headers.get('content-length') ?? '0');
  if (declared > limits.maxFeedBytes) throw new StrandError('STRAND_SOURCE_TOO_LARGE', `${url} declares ${declared} bytes, over ingest.maxFeedBytes (${limits.maxFeedBytes})`);
  const chunks: Uint8Array[] = [];
  let total = 0;
  for await (const chunk of res.body as unknown as AsyncIterable<Uint8Array>) {
    total += chunk.byteLength;
    if (total > limits.maxFeedBytes) throw new StrandError('STRAND_SOURCE_TOO_LARGE', `${url} sent more than ingest.maxFeedBytes (${limits.maxFeedBytes})`);
    chunks.push(chunk);
  }
  const charset = /charset=([^;]+)/i.exec(res.headers.get('content-type') ?? '')?.[1]?.replace(/"/g, '') ?? null;
  return { bytes: Buffer.concat(chunks), charset };
}
