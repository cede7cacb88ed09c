/**
 * Polls the operator's feeds, each on its own schedule: conditional GET with the validators
 * of the last answer (an unchanged feed costs a 304 and no parsing), Retry-After honoured on
 * 429 and 503, exponential backoff with jitter on errors, and the fetch limits of ingest
 * (address guard, redirects, timeout, size cap). New items go to the same intake as pushed
 * articles; every poll's outcome is kept per feed (the API shows it as the feed's health).
 * Over 350 lines because one poll's steps (schedule, fetch, parse, record the outcome)
 * update the same per-feed state, and are easiest to check in one place.
 */
import { createHash } from 'node:crypto';
import { StrandError, describeError } from '../errors.js';
import { type ReadLimits, fetchFeed, parseFeedBytes } from '../ingest/read-source.js';
import { NetworkGuard } from '../ingest/network-guard.js';
import { fetchFullText } from '../ingest/fetch-full-text.js';
import { contentHash } from '../ingest/to-article.js';
import type { Logger } from '../logger.js';
import type { Article } from '../records.js';
import { type ArticleLog, type FeedEntry, type FeedRegistry, type FeedState, newFeedState } from '../store/store.js';
import { backoffMs, retryAfterMs } from './schedule.js';

/** Polling settings (config `poll`). */
export interface PollOptions {
  intervalSeconds: number;
  maxBackoffSeconds: number;
  concurrency: number;
  maxFeeds: number;
  fullText: boolean;
  fullTextBelowChars: number;
}

/** A feed as the operator lists it. */
export interface FeedRequest {
  url: string;
  outlet?: string | null | undefined;
  intervalSeconds?: number | undefined;
}

/** What the poller needs. */
export interface PollerDeps {
  store: FeedRegistry & Pick<ArticleLog, 'hasArticle'>;
  /** Takes new articles (the local pipeline, or the Redis intake stream). */
  submit: (articles: readonly Article[]) => Promise<void>;
  limits: ReadLimits;
  options: PollOptions;
  logger: Logger;
  now?: () => Date;
  random?: () => number;
  /**
   * Whether this process polls now. Several api processes on one Redis partition share the
   * feeds: each serves them through the API, one (the lease holder) polls. Default: always.
   */
  polls?: () => boolean;
  /** How often the feeds are read back from the store (changes made through other processes), ms. Default 5 s. */
  refreshMs?: number;
}

/** What one round of polling did. */
export interface RoundSummary {
  polled: number;
  notModified: number;
  fresh: number;
  failed: number;
  throttled: number;
  newItems: number;
  bytes: number;
}

/** Delays kept per feed for its median. */
const DELAYS_KEPT = 101;
/** Ids of articles handed on that are remembered (a few hours of a thousand feeds). */
const HANDED_ON_KEPT = 50_000;
/** A Retry-After asking for longer than a week is read as a week. */
const MAX_RETRY_AFTER_MS = 7 * 86_400_000;
/** How often due feeds are looked for, ms. */
const TICK_MS = 1000;
/** How often the feeds are read back from the store, ms. */
const REFRESH_MS = 5000;

/** The feed id for a URL: the same URL is the same feed. */
export function feedId(url: string): string {
  return `fd_${createHash('sha256').update(url).digest('hex').slice(0, 16)}`;
}

export class FeedPoller {
  private readonly feeds = new Map<string, FeedEntry>();
  private readonly busy = new Set<string>();
  /** Ids handed on lately, oldest first: an article still on its way to the store is not handed on twice. */
  private readonly handedOn = new Set<string>();
  private timer: NodeJS.Timeout | null = null;
  private round: Promise<RoundSummary> | null = null;
  private refreshing: Promise<void> | null = null;
  private closing: Promise<void> | null = null;
  private lastRefresh = 0;
  private readonly now: () => Date;
  private readonly random: () => number;
  private readonly log: Logger;
  /** One connection pool for every feed (keep-alive across polls), address-guarded. */
  private readonly guard: NetworkGuard;
  private readonly agent: ReturnType<NetworkGuard['agent']>;

  constructor(private readonly d: PollerDeps) {
    this.guard = new NetworkGuard(d.limits);
    this.agent = this.guard.agent();
    this.now = d.now ?? (() => new Date());
    this.random = d.random ?? Math.random;
    this.log = d.logger.child({ stage: 'poll' });
  }

  /**
   * Loads the stored feeds and brings those from the configuration file in line with it:
   * new ones are added, changed ones updated, ones no longer listed removed. Feeds added
   * through the API are left as they are.
   */
  async load(configured: readonly FeedRequest[]): Promise<void> {
    for (const f of await this.d.store.listFeeds()) this.feeds.set(f.id, f);
    const listed = new Set<string>();
    for (const given of configured) {
      const req = { ...given, url: new URL(given.url).href };
      const id = feedId(req.url);
      listed.add(id);
      const have = this.feeds.get(id);
      const outlet = req.outlet ?? null;
      const interval = req.intervalSeconds ?? this.d.options.intervalSeconds;
      if (!have) await this.save(this.entry(req, 'config'));
      else if (have.outlet !== outlet || have.intervalSeconds !== interval || have.origin !== 'config')
        await this.save({ ...have, outlet, intervalSeconds: interval, origin: 'config' });
    }
    for (const f of [...this.feeds.values()]) {
      if (f.origin === 'config' && !listed.has(f.id)) {
        await this.d.store.deleteFeed(f.id);
        this.feeds.delete(f.id);
      }
    }
  }

  /** Polls due feeds every second (while `polls()` says so) and reads the feeds back from the store every few seconds, until stop(). */
  start(): void {
    if (this.timer) return;
    this.timer = setInterval(() => {
      if (!this.refreshing && Date.now() - this.lastRefresh >= (this.d.refreshMs ?? REFRESH_MS)) {
        this.refreshing = this.refresh()
          .catch((err: unknown) => {
            this.log.error({ err: describeError(err) }, 'reading the feeds back failed');
          })
          .finally(() => {
            this.refreshing = null;
          });
      }
      if (!this.round && (this.d.polls?.() ?? true))
        this.round = this.pollDue()
          .catch((err: unknown) => {
            this.log.error({ err: describeError(err) }, 'polling round failed');
            return emptyRound();
          })
          .finally(() => {
            this.round = null;
          });
    }, TICK_MS);
    this.timer.unref();
  }

  /** Stops polling, waits for the round in progress and closes the connections (once: a second call does nothing). */
  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    await this.round;
    await this.refreshing;
    this.closing ??= this.agent.close();
    await this.closing;
  }

  /**
   * Reads the feeds back from the store, where other processes add, change and remove them
   * and the polling process keeps their state. A feed being polled here keeps the entry in
   * hand (its poll writes the result).
   */
  async refresh(): Promise<void> {
    this.lastRefresh = Date.now();
    const stored = await this.d.store.listFeeds();
    const next = new Map<string, FeedEntry>();
    for (const f of stored) next.set(f.id, this.busy.has(f.id) ? (this.feeds.get(f.id) ?? f) : f);
    for (const id of this.busy) if (!next.has(id) && this.feeds.has(id)) next.set(id, this.feeds.get(id)!);
    this.feeds.clear();
    for (const [id, f] of next) this.feeds.set(id, f);
  }

  /** Every feed with its state, in the order added. */
  list(): FeedEntry[] {
    return [...this.feeds.values()];
  }

  get(id: string): FeedEntry | null {
    return this.feeds.get(id) ?? null;
  }

  /** Adds a feed (polled at once); refuses a malformed or forbidden URL, a known feed and too many feeds. */
  async add(req: FeedRequest): Promise<FeedEntry> {
    let url: URL;
    try {
      url = new URL(req.url);
    } catch (err) {
      throw new StrandError('STRAND_REQUEST_INVALID', `feed URL ${JSON.stringify(req.url.slice(0, 200))} is not a URL`, { cause: err });
    }
    if (!/^https?:$/.test(url.protocol))
      throw new StrandError('STRAND_REQUEST_INVALID', `feed URL must be http or https, not ${url.protocol}`);
    this.guard.checkUrl(url);
    // Another process may have added it, or others, since the last read.
    await this.refresh();
    const id = feedId(url.href);
    if (this.feeds.has(id)) throw new StrandError('STRAND_FEED_CONFLICT', `feed ${url.href} is already polled (${id})`);
    if (this.feeds.size >= this.d.options.maxFeeds)
      throw new StrandError('STRAND_FEED_CONFLICT', `already polling poll.maxFeeds (${this.d.options.maxFeeds}) feeds`);
    const entry = this.entry({ ...req, url: url.href }, 'api');
    await this.save(entry);
    return entry;
  }

  /** Pauses or resumes a feed, or changes its interval or outlet. */
  async update(
    id: string,
    change: { paused?: boolean | undefined; intervalSeconds?: number | undefined; outlet?: string | null | undefined },
  ): Promise<FeedEntry> {
    // Applied to the feed as stored, atomically: the polling process may be saving a poll of it.
    const next = await this.d.store.updateFeed(id, (f) => {
      const n: FeedEntry = { ...f, state: { ...f.state } };
      if (change.paused !== undefined) n.paused = change.paused;
      if (change.intervalSeconds !== undefined) n.intervalSeconds = change.intervalSeconds;
      if (change.outlet !== undefined) n.outlet = change.outlet;
      // A resumed feed is polled at once.
      if (f.paused && change.paused === false) n.state.nextPollAt = this.now().toISOString();
      return n;
    });
    if (!next) {
      this.feeds.delete(id);
      throw new StrandError('STRAND_NOT_FOUND', `no feed ${id}`);
    }
    this.feeds.set(id, next);
    return next;
  }

  /** Stops polling a feed and forgets it (its articles stay). */
  async remove(id: string): Promise<boolean> {
    this.feeds.delete(id);
    return this.d.store.deleteFeed(id);
  }

  /** Polls every feed that is due and not paused, a few at a time; resolves when all have answered. */
  async pollDue(): Promise<RoundSummary> {
    const now = this.now().getTime();
    const due = [...this.feeds.values()].filter((f) => !f.paused && !this.busy.has(f.id) && Date.parse(f.state.nextPollAt) <= now);
    const summary = emptyRound();
    let next = 0;
    const lane = async (): Promise<void> => {
      while (next < due.length) {
        const f = due[next++]!;
        this.busy.add(f.id);
        try {
          await this.pollOne(f, summary);
        } finally {
          this.busy.delete(f.id);
        }
      }
    };
    await Promise.all(Array.from({ length: Math.min(this.d.options.concurrency, due.length) }, lane));
    return summary;
  }

  private async pollOne(f: FeedEntry, summary: RoundSummary): Promise<void> {
    const started = this.now();
    const s: FeedState = { ...f.state, delaysMs: [...f.state.delaysMs], lastPollAt: started.toISOString(), requests: f.state.requests + 1 };
    const intervalMs = f.intervalSeconds * 1000;
    const fail = (message: string, waitMs: number): void => {
      s.failures++;
      s.lastError = message;
      s.nextPollAt = new Date(started.getTime() + waitMs).toISOString();
      summary.failed++;
    };
    const backoff = (): number => backoffMs(s.failures + 1, intervalMs, this.d.options.maxBackoffSeconds * 1000, this.random);
    summary.polled++;
    try {
      const res = await fetchFeed(f.url, this.d.limits, { etag: s.etag, lastModified: s.lastModified }, this.agent);
      s.lastStatus = res.status;
      s.bytes += res.received;
      summary.bytes += res.received;
      if (res.status === 304) {
        s.notModified++;
        summary.notModified++;
        this.succeeded(s, started, intervalMs);
      } else if (res.status === 200) {
        const doc = parseFeedBytes(f.url, res.bytes, res.charset, this.d.limits, this.now);
        const broken = doc.problems.find((p) => p.item === null && p.severity === 'error');
        if (broken) {
          fail(`${broken.code}: ${broken.message}`, backoff());
        } else {
          s.etag = res.etag;
          s.lastModified = res.lastModified;
          const fresh = await this.newArticles(f, doc.articles);
          s.itemsSeen += doc.articles.length;
          s.itemsNew += fresh.length;
          summary.newItems += fresh.length;
          summary.fresh++;
          for (const a of fresh) if (a.published) s.delaysMs.push(Math.max(0, Date.parse(a.fetched) - Date.parse(a.published)));
          s.delaysMs = s.delaysMs.slice(-DELAYS_KEPT);
          const full = this.d.options.fullText ? await this.withFullText(fresh) : { articles: fresh, failed: 0 };
          if (full.articles.length) await this.d.submit(full.articles);
          const itemProblems = doc.problems.filter((p) => p.severity === 'error');
          this.succeeded(s, started, intervalMs);
          // The poll succeeded; what went wrong with single items is still worth showing.
          const notes = [
            itemProblems.length
              ? `${itemProblems.length} item(s) skipped; first: ${itemProblems[0]!.code}: ${itemProblems[0]!.message}`
              : '',
            full.failed ? `full text not fetched for ${full.failed} item(s); their summaries were kept` : '',
          ].filter(Boolean);
          if (notes.length) s.lastError = notes.join('; ');
        }
      } else if (res.status === 429 || res.status === 503) {
        // The server says when to come back (never sooner than the feed's interval); without
        // a readable Retry-After, back off as on any error.
        const asked = retryAfterMs(res.retryAfter, started);
        summary.throttled++;
        fail(
          `HTTP ${res.status}${asked !== null ? ` (Retry-After ${Math.round(asked / 1000)} s)` : ''}`,
          asked !== null ? Math.min(Math.max(asked, intervalMs), MAX_RETRY_AFTER_MS) : backoff(),
        );
      } else {
        fail(`HTTP ${res.status}`, backoff());
      }
    } catch (err) {
      fail(describeError(err), backoff());
    }
    // Only the state is written, onto the feed as stored: it may have been changed (through
    // any api process) or removed while it was being fetched.
    const saved = await this.d.store.updateFeed(f.id, (current) => ({ ...current, state: s }));
    if (saved) this.feeds.set(f.id, saved);
    else this.feeds.delete(f.id);
    if (s.lastError && s.failures > 0)
      this.log.warn({ feed: f.url, failures: s.failures, error: s.lastError, next: s.nextPollAt }, 'feed poll failed');
  }

  /** Replaces summaries by the article bodies of their linked pages; a page that fails leaves its summary. */
  private async withFullText(articles: readonly Article[]): Promise<{ articles: Article[]; failed: number }> {
    const out: Article[] = [];
    let failed = 0;
    for (const a of articles) {
      if (!a.url || a.text.length >= this.d.options.fullTextBelowChars) {
        out.push(a);
        continue;
      }
      try {
        const text = await fetchFullText(a.url, this.d.limits, this.agent);
        out.push(
          text.length > a.text.length && text.length <= this.d.limits.maxArticleChars ? { ...a, text, contentHash: contentHash(text) } : a,
        );
      } catch (err) {
        failed++;
        this.log.debug({ article: a.id, err: describeError(err) }, 'full text not fetched; the summary is kept');
        out.push(a);
      }
    }
    return { articles: out, failed };
  }

  private succeeded(s: FeedState, started: Date, intervalMs: number): void {
    s.failures = 0;
    s.lastError = null;
    s.lastSuccessAt = started.toISOString();
    s.nextPollAt = new Date(started.getTime() + intervalMs).toISOString();
  }

  /** The feed's articles not stored yet (outlet as the operator named it). */
  private async newArticles(f: FeedEntry, articles: readonly Article[]): Promise<Article[]> {
    const out: Article[] = [];
    const seen = new Set<string>();
    for (const a of articles) {
      if (seen.has(a.id) || this.handedOn.has(a.id) || (await this.d.store.hasArticle(a.id))) continue;
      seen.add(a.id);
      out.push(f.outlet ? { ...a, outlet: f.outlet } : a);
    }
    for (const a of out) this.handedOn.add(a.id);
    for (const id of this.handedOn) {
      if (this.handedOn.size <= HANDED_ON_KEPT) break;
      this.handedOn.delete(id);
    }
    return out;
  }

  private entry(req: FeedRequest, origin: FeedEntry['origin']): FeedEntry {
    const now = this.now().toISOString();
    return {
      id: feedId(req.url),
      url: req.url,
      outlet: req.outlet ?? null,
      intervalSeconds: req.intervalSeconds ?? this.d.options.intervalSeconds,
      paused: false,
      origin,
      added: now,
      state: newFeedState(now),
    };
  }

  private async save(f: FeedEntry): Promise<void> {
    await this.d.store.putFeed(f);
    this.feeds.set(f.id, f);
  }
}

function emptyRound(): RoundSummary {
  return { polled: 0, notModified: 0, fresh: 0, failed: 0, throttled: 0, newItems: 0, bytes: 0 };
}
