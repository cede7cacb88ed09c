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
import { NetworkGuard, type NetworkPolicy } from './network-guard.js';
import { type Agent, fetch as undiciFetch } from 'undici';

/** Limits applied while reading. */
export interface ReadLimits extends NetworkPolicy {
  maxFeedBytes: number;
  maxArticleChars: number;
  fetchTimeoutMs: number;
  /** Redirects followed (default 5). */
  maxRedirects?: number;
  /** The window of publication dates taken (to-article.ts; defaults a century back, 48 hours ahead). */
  publishedPastDays?: number;
  publishedAheadHours?: number;
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
    throw new StrandError('STRAND_SOURCE_UNREADABLE', `cannot read ${path}: ${(err as NodeJS.ErrnoException).code ?? describeError(err)}`, {
      cause: err,
    });
  }
  if (!info.isDirectory()) return [abs];
  const entries = await readdir(abs, { recursive: true, withFileTypes: true });
  return entries
    .filter((e) => e.isFile() && FEED_FILE.test(e.name))
    .map((e) => join(e.parentPath, e.name))
    .sort();
}

/** Reads one file or URL into articles; never throws for bad content, only reports problems. `signal` abandons a fetch. */
export async function readFeedDocument(
  source: string,
  limits: ReadLimits,
  now: () => Date = () => new Date(),
  signal?: AbortSignal,
): Promise<FeedDocument> {
  let bytes: Uint8Array;
  let charset: string | null = null;
  try {
    if (/^https?:\/\//i.test(source)) {
      const res = await fetchFeed(source, limits, {}, undefined, signal);
      if (res.status !== 200) throw new StrandError('STRAND_SOURCE_UNREADABLE', `${res.url} answered HTTP ${res.status}`);
      ({ bytes, charset } = res);
    } else {
      bytes = await readFileCapped(source, limits.maxFeedBytes);
    }
  } catch (err) {
    const doc: FeedDocument = { source, outlet: '', articles: [], problems: [] };
    doc.problems.push(problem(source, err));
    return doc;
  }
  return parseFeedBytes(source, bytes, charset, limits, now);
}

/** Turns the bytes of one feed document into articles; never throws, reports problems. */
export function parseFeedBytes(
  source: string,
  bytes: Uint8Array,
  charset: string | null,
  limits: Pick<ReadLimits, 'maxArticleChars' | 'publishedPastDays' | 'publishedAheadHours'>,
  now: () => Date = () => new Date(),
): FeedDocument {
  const doc: FeedDocument = { source, outlet: '', articles: [], problems: [] };
  const fail = (err: unknown, item: string | null = null, severity: 'warning' | 'error' = 'error'): void => {
    doc.problems.push(problem(source, err, item, severity));
  };
  try {
    const decoded = decodeBytes(bytes, charset);
    if (decoded.warning) fail(new StrandError('STRAND_ENCODING_UNSUPPORTED', decoded.warning), null, 'warning');
    const feed = parseFeed(decoded.text);
    // Relative links are read against the feed's own URL; for a file, against the site link it names.
    const documentUrl = /^https?:\/\//i.test(source) ? source : feed.link;
    doc.outlet = feed.title || hostOf(feed.link ?? documentUrl) || 'unknown outlet';
    const fetched = now().toISOString();
    for (const item of feed.items) {
      try {
        const { article, warning } = toArticle(item, {
          outlet: doc.outlet,
          source,
          fetched,
          maxArticleChars: limits.maxArticleChars,
          documentUrl,
          ...(limits.publishedPastDays ? { publishedPastDays: limits.publishedPastDays } : {}),
          ...(limits.publishedAheadHours !== undefined ? { publishedAheadHours: limits.publishedAheadHours } : {}),
        });
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

function hostOf(url: string | null): string | null {
  try {
    return url ? new URL(url).hostname : null;
  } catch {
    return null;
  }
}

function problem(source: string, err: unknown, item: string | null = null, severity: 'warning' | 'error' = 'error'): IngestProblem {
  return {
    source,
    item,
    code: err instanceof StrandError ? err.code : 'STRAND_SOURCE_UNREADABLE',
    message: describeError(err).replace(/^STRAND_[A-Z_]+: /, ''),
    severity,
  };
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

/** Validators from an earlier answer, sent back so an unchanged feed costs a 304 (RFC 9110, 13.1). */
export interface Validators {
  etag?: string | null;
  lastModified?: string | null;
}

/** What a feed URL answered: 200 with the body, or another final status with its headers. */
export interface FetchedFeed {
  /** The URL after redirects. */
  url: string;
  status: number;
  bytes: Uint8Array;
  charset: string | null;
  etag: string | null;
  lastModified: string | null;
  /** The Retry-After header as sent, if any. */
  retryAfter: string | null;
  /** Bytes received (body only). */
  received: number;
}

/**
 * Fetches a feed URL within the limits: every address checked (also after each redirect),
 * a redirect limit, a timeout and a size cap. Sends the validators of an earlier answer; a
 * 304 comes back as such. Throws (with a StrandError) only for what is not an HTTP answer
 * or breaks a limit; the body is read only for a 200. A caller polling many feeds passes
 * one `agent` (from NetworkGuard.agent) for all of them, so connections are kept and reused.
 */
export async function fetchFeed(
  url: string,
  limits: ReadLimits,
  validators: Validators = {},
  agent?: Agent,
  signal?: AbortSignal,
): Promise<FetchedFeed> {
  return fetchDocument(url, limits, { validators, accept: FEED_TYPES, ...(signal ? { signal } : {}) }, agent);
}

const FEED_TYPES = 'application/rss+xml, application/atom+xml, application/feed+json, application/xml;q=0.9, */*;q=0.5';

/** What a fetch sends and when it gives up. */
export interface FetchOptions {
  validators?: Validators;
  accept: string;
  /** Abandons the fetch (the caller is stopping); the timeout applies regardless. */
  signal?: AbortSignal;
}

/** fetchFeed for any document (a linked article page): the same guard and limits, the given Accept. */
export async function fetchDocument(url: string, limits: ReadLimits, o: FetchOptions, agent?: Agent): Promise<FetchedFeed> {
  const guard = new NetworkGuard(limits);
  if (agent) return fetchWith(agent, url, limits, guard, o);
  const own = guard.agent();
  try {
    return await fetchWith(own, url, limits, guard, o);
  } finally {
    void own.close();
  }
}

async function fetchWith(agent: Agent, url: string, limits: ReadLimits, guard: NetworkGuard, o: FetchOptions): Promise<FetchedFeed> {
  const validators = o.validators ?? {};
  const accept = o.accept;
  const timeout = AbortSignal.timeout(limits.fetchTimeoutMs);
  const signal = o.signal ? AbortSignal.any([timeout, o.signal]) : timeout;
  let res: Response;
  let at = new URL(url);
  const headers: Record<string, string> = { accept, 'user-agent': 'Strandline/0.1' };
  if (validators.etag) headers['if-none-match'] = validators.etag;
  if (validators.lastModified) headers['if-modified-since'] = validators.lastModified;
  // Redirects are followed here, one by one, so that each target's address is checked too.
  for (let hop = 0; ; hop++) {
    guard.checkUrl(at);
    try {
      res = (await undiciFetch(at, { signal, dispatcher: agent, headers, redirect: 'manual' })) as unknown as Response;
    } catch (err) {
      const cause = (err as Error).cause;
      if (cause instanceof StrandError) throw cause;
      if (o.signal?.aborted) throw new StrandError('STRAND_SOURCE_UNREADABLE', `${at.href}: fetch abandoned (stopping)`, { cause: err });
      const timedOut = signal.aborted;
      throw new StrandError(
        'STRAND_SOURCE_UNREADABLE',
        timedOut
          ? `${at.href} did not answer within ingest.fetchTimeoutMs (${limits.fetchTimeoutMs} ms)`
          : `cannot fetch ${at.href}: ${describeError(cause ?? err)}`,
        { cause: err },
      );
    }
    const location = res.status >= 300 && res.status < 400 && res.status !== 304 ? res.headers.get('location') : null;
    if (!location) break;
    await res.body?.cancel();
    if (hop >= (limits.maxRedirects ?? 5))
      throw new StrandError(
        'STRAND_SOURCE_UNREADABLE',
        `${url} redirects more than ingest.maxRedirects (${limits.maxRedirects ?? 5}) times`,
      );
    at = new URL(location, at);
    if (!/^https?:$/.test(at.protocol)) throw new StrandError('STRAND_SOURCE_UNREADABLE', `${url} redirects to a ${at.protocol} URL`);
  }
  const answer = {
    url: at.href,
    status: res.status,
    charset: null as string | null,
    etag: res.headers.get('etag'),
    lastModified: res.headers.get('last-modified'),
    retryAfter: res.headers.get('retry-after'),
  };
  if (res.status !== 200) {
    await res.body?.cancel().catch(() => undefined);
    return { ...answer, bytes: new Uint8Array(0), received: 0 };
  }
  const declared = Number(res.headers.get('content-length') ?? '0');
  if (declared > limits.maxFeedBytes) {
    await res.body?.cancel().catch(() => undefined);
    throw new StrandError(
      'STRAND_SOURCE_TOO_LARGE',
      `${at.href} declares ${declared} bytes, over ingest.maxFeedBytes (${limits.maxFeedBytes})`,
    );
  }
  const chunks: Uint8Array[] = [];
  let total = 0;
  try {
    for await (const chunk of res.body as unknown as AsyncIterable<Uint8Array>) {
      total += chunk.byteLength;
      if (total > limits.maxFeedBytes)
        throw new StrandError('STRAND_SOURCE_TOO_LARGE', `${at.href} sent more than ingest.maxFeedBytes (${limits.maxFeedBytes})`);
      chunks.push(chunk);
    }
  } catch (err) {
    if (err instanceof StrandError) throw err;
    throw new StrandError(
      'STRAND_SOURCE_UNREADABLE',
      signal.aborted
        ? `${at.href} did not finish within ingest.fetchTimeoutMs (${limits.fetchTimeoutMs} ms)`
        : `reading ${at.href} failed: ${describeError(err)}`,
      { cause: err },
    );
  }
  answer.charset =
    /charset=([^;]+)/i
      .exec(res.headers.get('content-type') ?? '')?.[1]
      ?.replace(/"/g, '')
      .trim() ?? null;
  return { ...answer, bytes: Buffer.concat(chunks), received: total };
}
