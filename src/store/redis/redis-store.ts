/**
 * The Store contract on Redis (ioredis), for several processes and machines sharing one
 * state. Every write that must be atomic is one Lua script (src/store/redis/lua/), so a
 * commit is all-or-nothing with respect to other clients and replaying it changes nothing;
 * no WATCH/MULTI (which collapses under contention on hot keys). Reads are pipelined.
 *
 * Layout (keys.ts): per article a hash (meta JSON, text, seq) and hashes of sentences,
 * sentence texts, mentions and links; per event a hash (record JSON, label, outlets JSON,
 * linker state) and the set of sentences linked to it; sorted sets of articles by commit
 * order and by time, and of events by last activity; counters in one hash.
 *
 * Listing events with filters reads the events active in the time range and filters them
 * here: the cost grows with the events in range, not with the mentions.
 */
import type { RedisOptions } from 'ioredis';
import { type RedisClient, connectRedis, deleteMatching } from './connect.js';
import { StrandError } from '../../errors.js';
import type { Article, LinkEvidence, TimeExpression } from '../../records.js';
import type {
  ArticleCommit,
  ArticleDetail,
  CommitResult,
  Delivery,
  EventDetail,
  EventMention,
  EventPage,
  EventQuery,
  EventSummary,
  StoryDetail,
  StoryMergeCommit,
  StoryPage,
  StoryQuery,
  StorySummary,
  StoryUpdate,
  EventUpdate,
  FeedEntry,
  LinkedMention,
  LinkerSnapshot,
  MergeCommit,
  MergeRecord,
  OutboxMessage,
  SharedMention,
  SplitCommit,
  SplitRecord,
  Store,
  StoreCounts,
} from '../store.js';
import { ERASED_LABEL } from '../store.js';
import { decodeVector, decodeWords, encodeVector, encodeWords } from '../vector-codec.js';
import { canonicalUrl } from '../../ingest/canonical-url.js';
import { type Keyspace, keyspace } from './keys.js';
import { defineScript } from './scripts.js';

/** The label an event takes when the text it was labelled with is erased and no other text remains. */
/** Reads per pipeline round trip. */
const CHUNK = 500;
/** Tries of a feed update that other writers keep overtaking. */
const FEED_UPDATE_ATTEMPTS = 50;
/** Due deliveries read per page when some subscribers are skipped, and at most in all. */
const DUE_PAGE = 500;
const DUE_SCAN = 20_000;
/** Deliveries one pruning script call removes at most. */
const PRUNE_BATCH = 500;

type Script = (key: string, ...args: (string | Buffer | number)[]) => Promise<unknown>;

interface Scripts {
  commitArticles: Script;
  commitMerge: Script;
  commitSplit: Script;
  putStates: Script;
  commitStoryMerge: Script;
  eraseArticle: Script;
  pruneNotifications: Script;
  setIfUnchanged: Script;
}

/** Options for a Redis store. */
export interface RedisStoreOptions {
  url: string;
  /** The URL is a seed node of a Redis Cluster. */
  cluster?: boolean;
  partition: string;
  /** Extra ioredis options (tests shorten retries). */
  redis?: RedisOptions;
  /** Told of connection errors (Redis down, restarting); commands wait meanwhile. */
  onError?: (err: Error) => void;
  /** Commands fail at once while Redis is away instead of waiting (connect.ts FAIL_FAST; the API's store). */
  failFast?: boolean;
}

export { connectRedis, redactUrl } from './connect.js';
import { FAIL_FAST, closeClient, isConnectionError, isReady } from './connect.js';

/** Connects to Redis and checks it answers; refuses a malformed URL or partition. */
export async function openRedisStore(o: RedisStoreOptions): Promise<RedisStore> {
  const keys = keyspace(o.partition);
  return new RedisStore(
    await connectRedis({ url: o.url, cluster: o.cluster ?? false }, { ...(o.failFast ? FAIL_FAST : {}), ...o.redis }, o.onError),
    keys,
  );
}

export class RedisStore implements Store {
  private readonly scripts: Scripts;
  /** The linker's lease token its commits are fenced with; null: not fenced (one process, tools). */
  private fence: string | null = null;

  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
  ) {
    this.scripts = {
      commitArticles: defineScript(redis, 'commit-articles'),
      commitMerge: defineScript(redis, 'commit-merge'),
      commitSplit: defineScript(redis, 'commit-split'),
      putStates: defineScript(redis, 'put-states'),
      commitStoryMerge: defineScript(redis, 'commit-story-merge'),
      eraseArticle: defineScript(redis, 'erase-article'),
      pruneNotifications: defineScript(redis, 'prune-notifications'),
      setIfUnchanged: defineScript(redis, 'set-if-unchanged'),
    };
  }

  /**
   * Fences every later commit, merge and split with the linker lease `token`: each is
   * refused (STRAND_LEASE_LOST, nothing written) unless the partition's lease still holds
   * that token. Null lifts the fence.
   */
  fenceWrites(token: string | null): void {
    this.fence = token;
  }

  /** The partition's key names (tests and tools). */
  get keys(): Keyspace {
    return this.k;
  }

  async hasArticle(id: string): Promise<boolean> {
    return (await this.redis.exists(this.k.article(id))) === 1;
  }

  async findByUrl(canonical: string): Promise<string | null> {
    return this.redis.get(this.k.articleUrl(canonical));
  }

  async findByContentHash(hash: string): Promise<string | null> {
    return this.redis.get(this.k.contentHash(hash));
  }

  async commitArticle(c: ArticleCommit): Promise<CommitResult> {
    return (await this.commitArticles([c]))[0]!;
  }

  async commitArticles(cs: readonly ArticleCommit[]): Promise<CommitResult[]> {
    if (cs.length === 0) return [];
    const states: Buffer[] = [];
    const payload = cs.map((c) => ({
      id: c.article.id,
      meta: JSON.stringify(articleMeta(c.article)),
      sketch: c.sketch ? encodeWords(c.sketch).toString('base64') : null,
      text: c.article.text,
      time: Date.parse(c.article.published ?? c.article.fetched),
      outlet: c.article.outlet,
      contentHash: c.article.contentHash,
      canonicalUrl: canonicalUrl(c.article.url),
      sentences: c.sentences.map((s) => [String(s.index), JSON.stringify({ start: s.start, end: s.end, eventness: s.eventness }), s.text]),
      mentions: c.mentions.map((m) => [
        String(m.sentenceIndex),
        JSON.stringify({
          outlet: m.outlet,
          published: m.published,
          eventness: m.eventness,
          participants: m.participants,
          places: m.places,
          times: m.times,
          isCopy: m.isCopy,
        }),
        ...(m.vector ? [encodeVector(m.vector).toString('base64')] : []),
      ]),
      links: c.links.map((l) => [
        String(l.sentenceIndex),
        l.eventId,
        JSON.stringify({ score: l.score, rank: l.rank, evidence: l.evidence }),
      ]),
      events: c.events.map((e) => eventPayload(e, states)),
      storyId: c.storyId ?? null,
      story: c.story ? storyPayload(c.story, states) : null,
      idf: c.idf && (c.idf.docs > 0 || c.idf.df.size > 0) ? { docs: c.idf.docs, df: [...c.idf.df].flat() } : null,
      tally: c.tally && c.tally.mentions > 0 ? c.tally : null,
      messages: messagePayload(c.messages),
    }));
    try {
      return (await this.scripts.commitArticles(
        this.k.counts,
        this.k.prefix,
        JSON.stringify({ fence: this.fence, commits: payload }),
        ...states,
      )) as CommitResult[];
    } catch (err) {
      throw writeError(err, `cannot store ${cs.length} article(s) from ${cs[0]!.article.id}`);
    }
  }

  async commitMerge(m: MergeCommit): Promise<void> {
    const states: Buffer[] = [];
    const into = eventPayload(m.into, states);
    const payload = {
      fence: this.fence,
      from: m.from,
      into,
      merge: `${m.into.record.id}\n${m.score}\n${m.at}`,
      messages: messagePayload(m.messages),
    };
    try {
      await this.scripts.commitMerge(this.k.counts, this.k.prefix, JSON.stringify(payload), states[0]!);
    } catch (err) {
      throw writeError(err, `cannot merge ${m.from} into ${m.into.record.id}`);
    }
  }

  async commitStoryMerge(m: StoryMergeCommit): Promise<void> {
    const states: Buffer[] = [];
    const payload = {
      fence: this.fence,
      from: m.from,
      into: storyPayload(m.into, states),
      merge: `${m.into.record.id}\n${m.score}\n${m.at}`,
      messages: messagePayload(m.messages),
    };
    try {
      await this.scripts.commitStoryMerge(this.k.counts, this.k.prefix, JSON.stringify(payload), states[0]!);
    } catch (err) {
      throw writeError(err, `cannot merge story ${m.from} into ${m.into.record.id}`);
    }
  }

  async recentStoryIds(articles: number): Promise<string[]> {
    const ids = await this.redis.zrevrange(this.k.articles, 0, articles - 1);
    const stories = (await this.pipelined(ids, (p, id) => p.hget(this.k.article(id), 'story'))) as (string | null)[];
    const current = await this.currentStories(stories.filter((x): x is string => x !== null));
    return [...new Set(stories.flatMap((x) => (x === null ? [] : [current.get(x)!])))];
  }

  async storyMergedInto(id: string): Promise<string | null> {
    const into = (await this.currentStories([id])).get(id)!;
    return into === id ? null : into;
  }

  async listStories(q: StoryQuery): Promise<StoryPage> {
    const from = q.from ? Date.parse(q.from) : -Infinity;
    const ids = await this.redis.zrangebyscore(this.k.stories, Number.isFinite(from) ? from : '-inf', '+inf');
    let stories = await this.storySummaries(ids);
    const to = q.to ? (/^\d{4}-\d{2}-\d{2}$/.test(q.to) ? `${q.to}T23:59:59.999Z` : q.to) : null;
    if (to) stories = stories.filter((s) => s.firstSeen <= to);
    if (q.outlet) stories = stories.filter((s) => s.outlets.includes(q.outlet!));
    if (q.minOutlets) stories = stories.filter((s) => s.outlets.length >= q.minOutlets!);
    const words = (q.text ?? '')
      .split(/\s+/)
      .filter(Boolean)
      .slice(0, 8)
      .map((w) => w.toLowerCase());
    if (words.length) {
      const titles = await Promise.all(stories.map(async (s) => (await this.storyArticles(s.id)).map((a) => a.title)));
      stories = stories.filter((s, i) => hasEveryWord(words, [s.label, ...s.names, ...titles[i]!]));
    }
    stories.sort(
      listOrder<StorySummary>(q.sort === 'outlets' ? (x) => x.outlets.length : q.sort === 'articles' ? (x) => x.articleCount : null),
    );
    return { total: stories.length, stories: stories.slice(q.offset, q.offset + q.limit) };
  }

  async getStory(id: string): Promise<StoryDetail | null> {
    const [story] = await this.storySummaries([id]);
    if (!story) return null;
    const eventIds = await this.redis.smembers(this.k.storyEvents(id));
    const events = (await this.summaries(eventIds)).sort((a, b) => cmp(a.firstSeen, b.firstSeen) || cmp(a.id, b.id));
    const from = await this.redis.smembers(this.k.storyMergedInto(id));
    const recs = from.length ? await this.redis.hmget(this.k.storyMerges, ...from) : [];
    const merges = from.map((f, i) => parseMerge(f, recs[i]!)).sort((a, b) => cmp(a.at, b.at) || cmp(a.from, b.from));
    return { story, events, articles: await this.storyArticles(id), merges };
  }

  /** A story's articles, earliest first. */
  private async storyArticles(id: string): Promise<StoryDetail['articles']> {
    const ids = await this.redis.zrange(this.k.storyArticles(id), '0', '-1');
    const metas = (await this.pipelined(ids, (p, a) => p.hget(this.k.article(a), 'meta'))) as (string | null)[];
    return metas.flatMap((m) => {
      if (!m) return [];
      const a = JSON.parse(m) as ArticleMeta;
      return [{ id: a.id, title: a.title, outlet: a.outlet, url: a.url, published: a.published, duplicateOf: a.duplicateOf }];
    });
  }

  private async storySummaries(ids: readonly string[]): Promise<StorySummary[]> {
    const rows = (await this.pipelined(ids, (p, id) =>
      p.hmget(this.k.story(id), 'record', 'label').scard(this.k.storyEvents(id)),
    )) as unknown[];
    return ids.flatMap((id, i) => {
      const [record, label] = rows[i * 2] as (string | null)[];
      if (!record) return [];
      const r = JSON.parse(record) as Omit<StorySummary, 'id' | 'label' | 'eventCount'>;
      return [{ id, label: label!, ...r, eventCount: rows[i * 2 + 1] as number }];
    });
  }

  /** Each story id → the story it now lives in (itself when never merged), following merges. */
  private async currentStories(ids: readonly string[]): Promise<Map<string, string>> {
    const out = new Map<string, string>();
    let open = [...new Set(ids)].map((id) => [id, id] as [string, string]);
    for (let hop = 0; open.length > 0 && hop < 64; hop++) {
      const recs = await this.redis.hmget(this.k.storyMerges, ...open.map(([, at]) => at));
      const next: [string, string][] = [];
      open.forEach(([start, at], i) => {
        if (recs[i]) next.push([start, splitMember(recs[i]!)[0]]);
        else out.set(start, at);
      });
      open = next;
    }
    for (const [start, at] of open) out.set(start, at);
    return out;
  }

  async putEventStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    if (states.length === 0) return;
    try {
      await this.scripts.putStates(
        this.k.counts,
        this.k.prefix,
        JSON.stringify({ fence: this.fence, ids: states.map((s) => s.id) }),
        ...states.map((s) => Buffer.from(s.state.buffer, s.state.byteOffset, s.state.byteLength)),
      );
    } catch (err) {
      throw writeError(err, `cannot store the state of ${states.length} event(s)`);
    }
  }

  async commitSplit(sp: SplitCommit): Promise<void> {
    const states: Buffer[] = [];
    const payload = {
      fence: this.fence,
      from: eventPayload(sp.from, states),
      into: eventPayload(sp.into, states),
      moved: sp.moved.map((m) => [m.articleId, String(m.sentenceIndex)]),
      split: JSON.stringify({ from: sp.from.record.id, mentions: sp.moved.length, score: sp.score, at: sp.at }),
      messages: messagePayload(sp.messages),
    };
    try {
      await this.scripts.commitSplit(this.k.counts, this.k.prefix, JSON.stringify(payload), states[0]!, states[1]!, ERASED_LABEL);
    } catch (err) {
      throw writeError(err, `cannot split ${sp.into.record.id} off ${sp.from.record.id}`);
    }
  }

  async linkedMentions(eventId: string): Promise<LinkedMention[]> {
    const members = await this.redis.smembers(this.k.eventLinks(eventId));
    return (await this.readLinked(members, [eventId])).map(({ mention, links }) => ({
      mention,
      rank: links[0]!.rank,
      score: links[0]!.score,
    }));
  }

  async linkedToBoth(a: string, b: string): Promise<SharedMention[]> {
    const members = await this.redis.sinter(this.k.eventLinks(a), this.k.eventLinks(b));
    return (await this.readLinked(members, [a, b])).map(({ mention, links }) => ({ mention, links: [links[0]!, links[1]!] }));
  }

  /** The mentions `article\nindex` with their links to each of `events` (all present), oldest first. */
  private async readLinked(
    members: readonly string[],
    events: readonly string[],
  ): Promise<{ mention: LinkedMention['mention']; links: { rank: number; score: number }[] }[]> {
    const per = 3 + events.length;
    const rows = await this.pipelined(members, (p, m) => {
      const [article, idx] = splitMember(m);
      p.hget(this.k.mentions(article), idx).hget(this.k.sentenceText(article), idx).hget(this.k.mentionVectors(article), idx);
      for (const ev of events) p.hget(this.k.links(article), `${idx}\n${ev}`);
    });
    const out = members.flatMap((m, i) => {
      const [articleId, idx] = splitMember(m);
      const [mention, text, vector, ...links] = rows.slice(i * per, i * per + per) as (string | null)[];
      if (!mention || links.some((l) => !l)) return [];
      const mm = JSON.parse(mention) as {
        outlet: string;
        published: string;
        eventness: number;
        participants: string[];
        places: string[];
        times: TimeExpression[];
        isCopy: boolean;
      };
      return [
        {
          mention: {
            articleId,
            sentenceIndex: Number(idx),
            text: text ?? '',
            outlet: mm.outlet,
            published: mm.published,
            eventness: mm.eventness,
            participants: mm.participants,
            places: mm.places,
            times: mm.times,
            terms: [],
            isCopy: mm.isCopy,
            vector: vector ? decodeVector(Buffer.from(vector, 'base64')) : null,
          },
          links: links.map((l) => JSON.parse(l!) as { score: number; rank: number }).map(({ rank, score }) => ({ rank, score })),
        },
      ];
    });
    return out.sort(
      (a, b) =>
        cmp(a.mention.published, b.mention.published) ||
        cmp(a.mention.articleId, b.mention.articleId) ||
        a.mention.sentenceIndex - b.mention.sentenceIndex,
    );
  }

  async splitsOf(eventId: string): Promise<SplitRecord[]> {
    const off = await this.redis.smembers(this.k.splitOff(eventId));
    const ids = [eventId, ...off];
    const recs = await this.redis.hmget(this.k.splits, ...ids);
    return ids
      .flatMap((into, i) => {
        const rec = recs[i];
        if (!rec) return [];
        const r = JSON.parse(rec) as Omit<SplitRecord, 'into'>;
        return [{ from: r.from, into, mentions: r.mentions, score: r.score, at: r.at }];
      })
      .sort((a, b) => cmp(a.at, b.at) || cmp(a.into, b.into));
  }

  async eventLabels(ids: readonly string[]): Promise<Map<string, string>> {
    const labels = ids.length ? ((await this.pipelined(ids, (p, id) => p.hget(this.k.event(id), 'label'))) as (string | null)[]) : [];
    return new Map(ids.flatMap((id, i) => (labels[i] == null ? [] : [[id, labels[i]!] as [string, string]])));
  }

  async recentEventIds(articles: number): Promise<string[]> {
    const ids = await this.redis.zrevrange(this.k.articles, 0, articles - 1);
    const fields = (await this.pipelined(ids, (p, id) => p.hkeys(this.k.links(id)))) as string[][];
    return [...new Set(fields.flat().map((f) => f.slice(f.indexOf('\n') + 1)))].sort();
  }

  async mergedInto(id: string): Promise<string | null> {
    const rec = await this.redis.hget(this.k.merges, id);
    return rec ? parseMerge(id, rec).into : null;
  }

  async mergesInto(id: string): Promise<MergeRecord[]> {
    const from = await this.redis.smembers(this.k.mergedInto(id));
    const recs = from.length ? await this.redis.hmget(this.k.merges, ...from) : [];
    return from.map((f, i) => parseMerge(f, recs[i]!)).sort((a, b) => cmp(a.at, b.at) || cmp(a.from, b.from));
  }

  async loadLinkerState(): Promise<LinkerSnapshot> {
    const ids = await this.redis.zrange(this.k.events, '0', '-1');
    const states = (await this.pipelined(ids, (p, id) => p.hgetBuffer(this.k.event(id), 'state'))) as (Buffer | null)[];
    const storyIds = await this.redis.zrange(this.k.stories, '0', '-1');
    const storyStates = (await this.pipelined(storyIds, (p, id) => p.hgetBuffer(this.k.story(id), 'state'))) as (Buffer | null)[];
    const [docs, df, merges, tally] = await Promise.all([
      this.redis.get(this.k.idfDocs),
      this.redis.hgetall(this.k.idf),
      this.redis.hgetall(this.k.storyMerges),
      this.redis.hmget(this.k.linkTally, 'mentions', 'high'),
    ]);
    const bytes = (bs: (Buffer | null)[]): Uint8Array[] =>
      bs.filter((b): b is Buffer => b !== null).map((b) => new Uint8Array(b.buffer, b.byteOffset, b.byteLength));
    return {
      events: bytes(states),
      idf: { docs: Number(docs ?? 0), df: Object.entries(df).map(([f, n]) => [Number(f), Number(n)]) },
      tally: { mentions: Number(tally[0] ?? 0), high: Number(tally[1] ?? 0) },
      stories: bytes(storyStates),
      storyMerges: Object.entries(merges)
        .map(([from, rec]) => parseMerge(from, rec))
        .sort((a, b) => cmp(a.at, b.at) || cmp(a.from, b.from))
        .map((m) => [m.from, m.into]),
    };
  }

  async listEvents(q: EventQuery): Promise<EventPage> {
    const from = q.from ? Date.parse(q.from) : -Infinity;
    let ids = await this.redis.zrangebyscore(this.k.events, Number.isFinite(from) ? from : '-inf', '+inf');
    if (q.story) {
      // The story as it now stands: a merged-away id names its survivor's events.
      const inStory = new Set(await this.redis.smembers(this.k.storyEvents((await this.currentStories([q.story])).get(q.story)!)));
      ids = ids.filter((id) => inStory.has(id));
    }
    let events = await this.summaries(ids);
    const to = q.to ? (/^\d{4}-\d{2}-\d{2}$/.test(q.to) ? `${q.to}T23:59:59.999Z` : q.to) : null;
    if (to) events = events.filter((e) => e.firstSeen <= to);
    if (q.outlet) events = events.filter((e) => e.outlets.includes(q.outlet!));
    if (q.minOutlets) events = events.filter((e) => e.outlets.length >= q.minOutlets!);
    const words = (q.text ?? '')
      .split(/\s+/)
      .filter(Boolean)
      .slice(0, 8)
      .map((w) => w.toLowerCase());
    if (words.length) {
      const texts = (await this.pipelined(events, (p, e) => p.smembers(this.k.eventLinks(e.id)))) as string[][];
      const sentenceTexts = await Promise.all(texts.map((members) => this.sentenceTexts(members)));
      events = events.filter((e, i) => hasEveryWord(words, [e.label, ...sentenceTexts[i]!]));
    }
    events.sort(
      listOrder<EventSummary>(q.sort === 'outlets' ? (x) => x.outlets.length : q.sort === 'mentions' ? (x) => x.mentionCount : null),
    );
    return { total: events.length, events: events.slice(q.offset, q.offset + q.limit) };
  }

  async getEvent(id: string): Promise<EventDetail | null> {
    const [event] = await this.summaries([id]);
    if (!event) return null;
    const members = await this.redis.smembers(this.k.eventLinks(id));
    const rows = await this.pipelined(members, (p, m) => {
      const [article, idx] = splitMember(m);
      return p
        .hget(this.k.links(article), `${idx}\n${id}`)
        .hget(this.k.mentions(article), idx)
        .hget(this.k.sentenceText(article), idx)
        .hget(this.k.article(article), 'meta');
    });
    const mentions = members.map((m, i): EventMention => {
      const [articleId, idx] = splitMember(m);
      const [link, mention, text, meta] = rows.slice(i * 4, i * 4 + 4) as (string | null)[];
      const l = JSON.parse(link!) as { score: number; rank: number; evidence: LinkEvidence };
      const mm = JSON.parse(mention!) as { published: string; isCopy: boolean; times: TimeExpression[]; outlet: string };
      const a = JSON.parse(meta!) as ArticleMeta;
      return {
        articleId,
        articleTitle: a.title,
        articleUrl: a.url,
        outlet: a.outlet,
        published: mm.published,
        isCopy: mm.isCopy,
        sentenceIndex: Number(idx),
        text: text ?? null,
        score: l.score,
        rank: l.rank,
        evidence: l.evidence,
        times: mm.times,
      };
    });
    mentions.sort((a, b) => cmp(a.published, b.published) || cmp(a.articleId, b.articleId) || a.sentenceIndex - b.sentenceIndex);
    return { event, mentions, merges: await this.mergesInto(id), splits: await this.splitsOf(id) };
  }

  async getArticle(id: string): Promise<ArticleDetail | null> {
    // One MULTI so that the five reads see the same commit.
    const replies = (await this.redis
      .multi()
      .hgetall(this.k.article(id))
      .hgetall(this.k.sentences(id))
      .hgetall(this.k.sentenceText(id))
      .hkeys(this.k.mentions(id))
      .hgetall(this.k.links(id))
      .exec())!.map(([err, reply]) => {
      if (err) throw new StrandError('STRAND_STORE_FAILED', `Redis read failed: ${err.message}`, { cause: err });
      return reply;
    });
    const [article, sentences, texts, mentions, links] = replies as [
      Record<string, string>,
      Record<string, string>,
      Record<string, string>,
      string[],
      Record<string, string>,
    ];
    if (!article.meta) return null;
    const linkRows = Object.entries(links).map(([field, v]) => {
      const [idx, eventId] = splitMember(field);
      return { idx: Number(idx), eventId, ...(JSON.parse(v) as { score: number; rank: number; evidence: LinkEvidence }) };
    });
    const eventIds = [...new Set(linkRows.map((l) => l.eventId))];
    const labels = eventIds.length
      ? ((await this.pipelined(eventIds, (p, e) => p.hget(this.k.event(e), 'label'))) as (string | null)[])
      : [];
    const label = new Map(eventIds.map((e, i) => [e, labels[i] ?? '']));
    const isMention = new Set(mentions.map(Number));
    const sentenceRows = Object.entries(sentences)
      .map(([idx, v]) => ({ index: Number(idx), ...(JSON.parse(v) as { start: number; end: number; eventness: number }) }))
      .sort((x, y) => x.index - y.index);
    const meta = JSON.parse(article.meta) as ArticleMeta;
    const story = article.story ? (await this.currentStories([article.story])).get(article.story)! : null;
    return {
      article: { ...meta, text: article.text ?? null, story },
      sentences: sentenceRows.map((s) => ({
        index: s.index,
        text: texts[String(s.index)] ?? '',
        start: s.start,
        end: s.end,
        eventness: s.eventness,
        isMention: isMention.has(s.index),
        links: linkRows
          .filter((l) => l.idx === s.index)
          .sort((x, y) => x.rank - y.rank)
          .map((l) => ({ eventId: l.eventId, eventLabel: label.get(l.eventId)!, score: l.score, rank: l.rank, evidence: l.evidence })),
      })),
    };
  }

  async listOutlets(): Promise<{ outlet: string; articles: number }[]> {
    return Object.entries(await this.redis.hgetall(this.k.outlets))
      .map(([outlet, n]) => ({ outlet, articles: Number(n) }))
      .sort((a, b) => cmp(a.outlet, b.outlet));
  }

  async counts(): Promise<StoreCounts> {
    const c = await this.redis.hgetall(this.k.counts);
    const n = (f: string) => Number(c[f] ?? 0);
    return {
      articles: n('articles'),
      sentences: n('sentences'),
      mentions: n('mentions'),
      links: n('links'),
      events: n('events'),
      stories: n('stories'),
    };
  }

  async dueDeliveries(now: string, limit: number, skip: readonly string[] = []): Promise<Delivery[]> {
    const until = String(Date.parse(now));
    if (skip.length === 0) return this.deliveries(await this.redis.zrangebyscore(this.k.due, '-inf', until, 'LIMIT', 0, limit));
    // Members are `<message>\n<subscriber>`: pages are read past the skipped subscribers'
    // backlog, up to DUE_SCAN members, so a receiver that hangs never hides the others'.
    const skipped = new Set(skip);
    const keys: string[] = [];
    for (let offset = 0; keys.length < limit && offset < DUE_SCAN; offset += DUE_PAGE) {
      const page = await this.redis.zrangebyscore(this.k.due, '-inf', until, 'LIMIT', offset, DUE_PAGE);
      for (const key of page) if (keys.length < limit && !skipped.has(splitMember(key)[1])) keys.push(key);
      if (page.length < DUE_PAGE) break;
    }
    return this.deliveries(keys);
  }

  async recordAttempt(
    messageId: string,
    subscriber: string,
    o: { status: Delivery['status']; attempts: number; nextAt: string; error: string | null },
  ): Promise<void> {
    const key = `${messageId}\n${subscriber}`;
    const tx = this.redis
      .multi()
      .hset(this.k.deliveries, key, JSON.stringify({ status: o.status, attempts: o.attempts, nextAt: o.nextAt, lastError: o.error }));
    if (o.status === 'pending') tx.zadd(this.k.due, Date.parse(o.nextAt), key);
    else tx.zrem(this.k.due, key);
    if (o.status === 'dead') tx.zadd(this.k.dead, Date.parse(o.nextAt), key);
    if (o.status !== 'pending') tx.zadd(this.k.settled, Date.parse(o.nextAt), key);
    await tx.exec();
  }

  async claimVectorSpace(space: string): Promise<string> {
    await this.redis.set(this.k.vectorSpace, space, 'NX');
    return (await this.redis.get(this.k.vectorSpace))!;
  }

  async pruneNotifications(before: string): Promise<number> {
    await this.indexSettled();
    let removed = 0;
    for (;;) {
      // Batches keep each script call short: Redis runs nothing else meanwhile.
      const [deliveries, messages] = (await this.scripts.pruneNotifications(
        this.k.settled,
        this.k.prefix,
        Date.parse(before),
        PRUNE_BATCH,
      )) as [number, number];
      removed += messages;
      if (deliveries < PRUNE_BATCH) return removed;
    }
  }

  /** Puts deliveries settled before the settled index existed into it, once per partition. */
  private async indexSettled(): Promise<void> {
    if (await this.redis.exists(this.k.settledIndexed)) return;
    let cursor = '0';
    do {
      const [next, flat] = await this.redis.hscan(this.k.deliveries, cursor, 'COUNT', 1000);
      const tx = this.redis.multi();
      for (let i = 0; i < flat.length; i += 2) {
        const s = JSON.parse(flat[i + 1]!) as { status: Delivery['status']; nextAt: string };
        if (s.status !== 'pending') tx.zadd(this.k.settled, Date.parse(s.nextAt), flat[i]!);
      }
      await tx.exec();
      cursor = next;
    } while (cursor !== '0');
    await this.redis.set(this.k.settledIndexed, '1');
  }

  async deadLetters(limit: number): Promise<Delivery[]> {
    return this.deliveries(await this.redis.zrevrange(this.k.dead, 0, limit - 1));
  }

  async recentSketches(days: number): Promise<{ id: string; time: number; sketch: Uint32Array }[]> {
    const newest = await this.redis.zrevrange(this.k.articlesByTime, 0, 0, 'WITHSCORES');
    if (newest.length < 2) return [];
    const ids = await this.redis.zrangebyscore(this.k.articlesByTime, String(Number(newest[1]) - days * 86_400_000), '+inf', 'WITHSCORES');
    const pairs: [string, number][] = [];
    for (let i = 0; i < ids.length; i += 2) pairs.push([ids[i]!, Number(ids[i + 1])]);
    const sketches = (await this.pipelined(pairs, (p, [id]) => p.hget(this.k.article(id), 'sketch'))) as (string | null)[];
    return pairs.flatMap(([id, time], i) => {
      const b = sketches[i];
      if (!b) return [];
      return [{ id, time, sketch: decodeWords(Buffer.from(b, 'base64')) }];
    });
  }

  async listFeeds(): Promise<FeedEntry[]> {
    const ids = await this.redis.zrange(this.k.feedOrder, '0', '-1');
    const data = ids.length ? await this.redis.hmget(this.k.feeds, ...ids) : [];
    return data.filter((d): d is string => d !== null).map((d) => JSON.parse(d) as FeedEntry);
  }

  async putFeed(f: FeedEntry): Promise<void> {
    // NX keeps a feed's place in the list when it is written again.
    await this.redis
      .multi()
      .hset(this.k.feeds, f.id, JSON.stringify(f))
      .zadd(this.k.feedOrder, 'NX', String(Date.parse(f.added) || 0), f.id)
      .exec();
  }

  async updateFeed(id: string, change: (f: FeedEntry) => FeedEntry): Promise<FeedEntry | null> {
    // Compare and set: another process (an api process serving a change, the polling one
    // saving a poll) may write the feed between the read and the write.
    for (let attempt = 0; attempt < FEED_UPDATE_ATTEMPTS; attempt++) {
      const data = await this.redis.hget(this.k.feeds, id);
      if (data === null) return null;
      const next = change(JSON.parse(data) as FeedEntry);
      const done = await this.scripts.setIfUnchanged(this.k.feeds, id, data, JSON.stringify(next));
      if (done === 1) return next;
      if (done === -1) return null;
      // Overtaken: wait a little (longer each time, with jitter) so that contenders spread out.
      await new Promise((r) => setTimeout(r, Math.random() * (attempt + 1) * 2));
    }
    throw new StrandError('STRAND_STORE_FAILED', `feed ${id} kept changing under ${FEED_UPDATE_ATTEMPTS} attempts to update it`);
  }

  async deleteFeed(id: string): Promise<boolean> {
    const [[, removed]] = (await this.redis.multi().hdel(this.k.feeds, id).zrem(this.k.feedOrder, id).exec())! as [[Error | null, number]];
    return removed === 1;
  }

  async eraseTextBefore(day: string): Promise<number> {
    const ids = await this.redis.zrangebyscore(this.k.articlesByTime, '-inf', `(${Date.parse(day)}`);
    let erased = 0;
    for (const id of ids) if ((await this.scripts.eraseArticle(this.k.counts, this.k.prefix, id, ERASED_LABEL)) === 2) erased++;
    return erased;
  }

  async eraseArticleText(id: string): Promise<boolean> {
    return (await this.scripts.eraseArticle(this.k.counts, this.k.prefix, id, ERASED_LABEL)) !== 0;
  }

  /**
   * Nothing to do in memory: erased fields are gone from Redis at once. Its persistence
   * files (RDB snapshots, the append-only file) keep old values until they are rewritten,
   * which the Redis operator schedules (BGSAVE, BGREWRITEAOF).
   */
  async compact(): Promise<void> {}

  /** Deletes every key of this partition (tests and decommissioning; not part of the contract). */
  async dropPartition(): Promise<number> {
    return deleteMatching(this.redis, this.k.pattern);
  }

  /** Used memory of the Redis server, bytes (bench). */
  async usedMemory(): Promise<number> {
    const info = await this.redis.info('memory');
    return Number(/used_memory:(\d+)/.exec(info)?.[1] ?? 0);
  }

  unavailable(err?: unknown): boolean {
    return !isReady(this.redis) || (err !== undefined && isConnectionError(err));
  }

  async close(): Promise<void> {
    await closeClient(this.redis);
  }

  private async summaries(ids: readonly string[]): Promise<EventSummary[]> {
    const rows = (await this.pipelined(ids, (p, id) => p.hmget(this.k.event(id), 'record', 'label', 'outlets'))) as (string | null)[][];
    const parsed = rows.map(([record]) =>
      record ? (JSON.parse(record) as Omit<EventSummary, 'id' | 'label' | 'outlets' | 'independentOutlets'>) : null,
    );
    // An event keeps the story that opened it; the story it lives in now follows merges.
    const stories = await this.currentStories(parsed.flatMap((r) => (r?.story ? [r.story] : [])));
    return rows.flatMap(([, label, outlets], i) => {
      const r = parsed[i];
      if (!r) return [];
      const o = JSON.parse(outlets!) as EventUpdate['outlets'];
      return [
        {
          id: ids[i]!,
          label: label!,
          ...r,
          story: r.story ? stories.get(r.story)! : null,
          outlets: o.map((x) => x.outlet).sort(),
          independentOutlets: o.filter((x) => x.independent > 0).length,
        },
      ];
    });
  }

  private async sentenceTexts(members: readonly string[]): Promise<string[]> {
    const texts = (await this.pipelined(members, (p, m) => {
      const [article, idx] = splitMember(m);
      return p.hget(this.k.sentenceText(article), idx);
    })) as (string | null)[];
    return texts.filter((t): t is string => t !== null);
  }

  private async deliveries(keys: readonly string[]): Promise<Delivery[]> {
    if (keys.length === 0) return [];
    const states = await this.redis.hmget(this.k.deliveries, ...keys);
    const messages = (await this.pipelined(keys, (p, key) => p.hmget(this.k.outbox(splitMember(key)[0]), 'type', 'body', 'created'))) as (
      string | null
    )[][];
    return keys.map((key, i) => {
      const [messageId, subscriber] = splitMember(key);
      const s = JSON.parse(states[i]!) as { status: Delivery['status']; attempts: number; nextAt: string; lastError: string | null };
      const [type, body, created] = messages[i]!;
      return { messageId, subscriber, type: type!, body: body!, created: created!, ...s };
    });
  }

  /** Runs `add` (one or more commands) for each item in pipelines of CHUNK items; returns every reply in order. */
  private async pipelined<T>(items: readonly T[], add: (p: ReturnType<RedisClient['pipeline']>, item: T) => unknown): Promise<unknown[]> {
    const out: unknown[] = [];
    for (let at = 0; at < items.length; at += CHUNK) {
      const p = this.redis.pipeline();
      for (const item of items.slice(at, at + CHUNK)) add(p, item);
      for (const [err, reply] of (await p.exec())!) {
        if (err) throw new StrandError('STRAND_STORE_FAILED', `Redis read failed: ${err.message}`, { cause: err });
        out.push(reply);
      }
    }
    return out;
  }
}

type ArticleMeta = Omit<Article, 'text' | 'presplit'>;

function articleMeta(a: Article): ArticleMeta {
  return {
    id: a.id,
    outlet: a.outlet,
    url: a.url,
    title: a.title,
    published: a.published,
    fetched: a.fetched,
    language: a.language,
    contentHash: a.contentHash,
    duplicateOf: a.duplicateOf,
    copySimilarity: a.duplicateOf ? (a.copySimilarity ?? 1) : null,
    source: a.source,
  };
}

/** An event as the scripts take it; its state goes into `states` and is referred to by number. */
function eventPayload(
  e: EventUpdate,
  states: Buffer[],
): { id: string; record: string; label: string; outlets: string; lastSeen: number; state: number; story: string | null } {
  const { id, label, outlets: _names, ...record } = e.record;
  states.push(Buffer.from(e.state.buffer, e.state.byteOffset, e.state.byteLength));
  return {
    id,
    record: JSON.stringify(record),
    label,
    outlets: JSON.stringify(e.outlets),
    lastSeen: Date.parse(e.record.lastSeen),
    state: states.length,
    story: e.record.story,
  };
}

/** A story as the scripts take it (as eventPayload). */
function storyPayload(s: StoryUpdate, states: Buffer[]): { id: string; record: string; label: string; lastSeen: number; state: number } {
  const { id, label, ...record } = s.record;
  states.push(Buffer.from(s.state.buffer, s.state.byteOffset, s.state.byteLength));
  return { id, record: JSON.stringify(record), label, lastSeen: Date.parse(s.record.lastSeen), state: states.length };
}

function messagePayload(messages: readonly OutboxMessage[]): object[] {
  return messages.map((m) => ({
    id: m.id,
    type: m.type,
    body: m.body,
    created: m.created,
    subscribers: m.subscribers,
    dueAt: Date.parse(m.created),
    ...namedIn(m.body),
    delivery: JSON.stringify({ status: 'pending', attempts: 0, nextAt: m.created, lastError: null }),
  }));
}

/** The articles and events a message names (its mention's article; each event record's id), for erasure. */
function namedIn(body: string): { articles: string[]; events: string[] } {
  const data = (JSON.parse(body) as { data?: Record<string, { id?: unknown; article?: unknown } | null> }).data ?? {};
  const parts = Object.values(data).filter((p): p is { id?: unknown; article?: unknown } => p !== null && typeof p === 'object');
  return {
    articles: parts.flatMap((p) => (typeof p.article === 'string' ? [p.article] : [])),
    events: parts.flatMap((p) => (typeof p.id === 'string' && p.id.startsWith('ev_') ? [p.id] : [])),
  };
}

function parseMerge(from: string, rec: string): MergeRecord {
  const [into, score, at] = rec.split('\n');
  return { from, into: into!, score: Number(score), at: at! };
}

/** A failed write script as a StrandError: a fenced-off linker's write, or a store failure. */
function writeError(err: unknown, what: string): StrandError {
  const message = (err as Error).message;
  if (message.includes('STRAND_LEASE_LOST'))
    return new StrandError('STRAND_LEASE_LOST', `${what}: this linker no longer holds the partition lease; nothing was written`, {
      cause: err,
    });
  return new StrandError('STRAND_STORE_FAILED', `${what}: ${message}`, { cause: err });
}

function splitMember(m: string): [string, string] {
  const nl = m.indexOf('\n');
  return [m.slice(0, nl), m.slice(nl + 1)];
}

function cmp(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/** True when every (lower-case) word is part of one of the texts: the in-process text filter of the lists. */
function hasEveryWord(words: readonly string[], texts: readonly string[]): boolean {
  const hay = texts.map((t) => t.toLowerCase());
  return words.every((w) => hay.some((t) => t.includes(w)));
}

/** The order of a list: by a count, largest first, then (or else) most recently active first, then id. */
function listOrder<T extends { lastSeen: string; id: string }>(count: ((x: T) => number) | null): (a: T, b: T) => number {
  const byRecent = (a: T, b: T): number => cmp(b.lastSeen, a.lastSeen) || cmp(a.id, b.id);
  return count ? (a, b) => count(b) - count(a) || byRecent(a, b) : byRecent;
}
