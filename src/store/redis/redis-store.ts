/**
 * The Store contract on Redis (ioredis), for several processes and machines sharing one
 * state. Every write that must be atomic is one Lua script (src/store/redis/lua/), so a
 * commit is all-or-nothing with respect to other clients and replaying it changes nothing;
 * no WATCH/MULTI (which collapses under contention on hot keys). Reads are pipelined.
 *
 * Layout (keys.ts): per article a hash (meta JSON, text, seq) and hashes of sentences,
 * sentence texts, mentions and links; per event a hash (record JSON, label, outlets JSON,
 * linker state) and the set of sentences linked to it; sorted sets of articles by commit
 * order and by time, and of events by last activity; counters in one hash. Over 350 lines
 * because each commit's payload is built here, beside the script it feeds; the other
 * concerns are parts of their own (event-queries.ts, outbox.ts, ...).
 */
import type { RedisOptions } from 'ioredis';
import { type RedisClient, connectRedis, deleteMatching } from './connect.js';
import { StrandError } from '../../errors.js';
import type { Article, LinkEvidence, Mention } from '../../records.js';
import type {
  ArticleCommit,
  CorrectionCommit,
  StoryUnmergeCommit,
  StoryUnsplitCommit,
  CommitResult,
  StoryMember,
  StoryMergeCommit,
  StorySplitCommit,
  StoryUpdate,
  EventUpdate,
  LinkedMention,
  LinkerSnapshot,
  MergeCommit,
  OutboxMessage,
  SharedLink,
  SharedMention,
  SplitCommit,
  Store,
} from '../store.js';
import { StoreParts } from '../store-parts.js';
import { ERASED_LABEL } from '../../link/labels.js';
import { decodeVector, decodeWords, encodeVector, encodeWords } from '../vector-codec.js';
import { type Keyspace, keyspace } from './keys.js';
import { defineScript } from './scripts.js';
import { migratePartition } from './migrate.js';
import { type ArticleMeta, RedisEventQueries } from './event-queries.js';
import { RedisOutbox } from './outbox.js';
import { RedisFeedRegistry } from './feed-registry.js';
import { RedisSubscriptions } from './subscriptions.js';
import { RedisApiKeys } from './api-keys.js';
import { RedisReviews } from './reviews.js';
import { RedisCorrections } from './corrections.js';
import { RedisRetention } from './retention.js';
import { cmp, parseMerge, pipelined, splitMember } from './pipelined.js';

type Script = (key: string, ...args: (string | Buffer | number)[]) => Promise<unknown>;

interface Scripts {
  commitArticles: Script;
  commitMerge: Script;
  commitSplit: Script;
  putStates: Script;
  settleConsolidation: Script;
  commitStoryMerge: Script;
  commitStorySplit: Script;
  eraseArticle: Script;
  pruneNotifications: Script;
  setIfUnchanged: Script;
  recordAttempt: Script;
  fanOut: Script;
  putSubscription: Script;
  commitCorrection: Script;
  commitStoryUnmerge: Script;
  commitStoryUnsplit: Script;
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

/** Connects to Redis and checks it answers, then brings the partition's data up to date (migrate.ts); refuses a malformed URL or partition. */
export async function openRedisStore(o: RedisStoreOptions): Promise<RedisStore> {
  const keys = keyspace(o.partition);
  const redis = await connectRedis(
    { url: o.url, cluster: o.cluster ?? false },
    { ...(o.failFast ? FAIL_FAST : {}), ...o.redis },
    o.onError,
  );
  try {
    await migratePartition(redis, keys);
  } catch (err) {
    await closeClient(redis);
    throw new StrandError('STRAND_STORE_FAILED', `cannot bring Redis partition ${o.partition} up to date: ${(err as Error).message}`, {
      cause: err,
    });
  }
  return new RedisStore(redis, keys);
}

/**
 * The Redis implementation of Store. It writes the article log and the linking state (each
 * commit one script, outbox messages included) and hands the other concerns to their own
 * parts: the API's queries, the outbox's deliveries, the feed list and retention.
 */
export class RedisStore extends StoreParts implements Store {
  private readonly scripts: Scripts;
  protected readonly queries: RedisEventQueries;
  protected readonly outbox: RedisOutbox;
  protected readonly apiKeys: RedisApiKeys;
  protected readonly reviews: RedisReviews;
  protected readonly corrections: RedisCorrections;
  protected readonly subscriptions: RedisSubscriptions;
  protected readonly feeds: RedisFeedRegistry;
  protected readonly retention: RedisRetention;
  /** The linker's lease token its commits are fenced with; null: not fenced (one process, tools). */
  private fence: string | null = null;

  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
  ) {
    super();
    this.scripts = {
      commitArticles: defineScript(redis, 'commit-articles'),
      commitMerge: defineScript(redis, 'commit-merge'),
      commitSplit: defineScript(redis, 'commit-split'),
      putStates: defineScript(redis, 'put-states'),
      settleConsolidation: defineScript(redis, 'settle-consolidation'),
      commitStoryMerge: defineScript(redis, 'commit-story-merge'),
      commitStorySplit: defineScript(redis, 'commit-story-split'),
      eraseArticle: defineScript(redis, 'erase-article'),
      pruneNotifications: defineScript(redis, 'prune-notifications'),
      setIfUnchanged: defineScript(redis, 'set-if-unchanged'),
      recordAttempt: defineScript(redis, 'record-attempt'),
      fanOut: defineScript(redis, 'fan-out'),
      putSubscription: defineScript(redis, 'put-subscription'),
      commitCorrection: defineScript(redis, 'commit-correction'),
      commitStoryUnmerge: defineScript(redis, 'commit-story-unmerge'),
      commitStoryUnsplit: defineScript(redis, 'commit-story-unsplit'),
    };
    this.queries = new RedisEventQueries(redis, k);
    this.outbox = new RedisOutbox(redis, k, this.scripts.pruneNotifications, this.scripts.recordAttempt);
    this.subscriptions = new RedisSubscriptions(redis, k, this.outbox, this.scripts);
    this.apiKeys = new RedisApiKeys(redis, k);
    this.reviews = new RedisReviews(redis, k);
    this.corrections = new RedisCorrections(redis, k, {
      commit: (c) => this.runCorrection(c),
      unmerge: (u) => this.runStoryUnmerge(u),
      unsplit: (u) => this.runStoryUnsplit(u),
    });
    this.feeds = new RedisFeedRegistry(redis, k, this.scripts.setIfUnchanged);
    this.retention = new RedisRetention(redis, k, this.scripts.eraseArticle);
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
      storyVector: c.storyInput ? encodeVector(c.storyInput.vector).toString('base64') : null,
      storyNames: c.storyInput ? JSON.stringify(c.storyInput.names) : null,
      text: c.article.text,
      time: Date.parse(c.article.published ?? c.article.fetched),
      outlet: c.article.outlet,
      contentHash: c.article.contentHash,
      canonicalUrl: c.canonicalUrl,
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
      due: c.consolidationDue === true,
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
      correction: m.correction?.id ?? null,
    };
    try {
      const record = m.correction ? [JSON.stringify(m.correction)] : [];
      await this.scripts.commitStoryMerge(this.k.counts, this.k.prefix, JSON.stringify(payload), states[0]!, ...record);
    } catch (err) {
      throw writeError(err, `cannot merge story ${m.from} into ${m.into.record.id}`);
    }
  }

  async recentStoryIds(articles: number): Promise<string[]> {
    const ids = await this.redis.zrevrange(this.k.articles, 0, articles - 1);
    const stories = (await pipelined(this.redis, ids, (p, id) => p.hget(this.k.article(id), 'story'))) as (string | null)[];
    const current = await this.queries.currentStories(stories.filter((x): x is string => x !== null));
    return [...new Set(stories.flatMap((x) => (x === null ? [] : [current.get(x)!])))];
  }

  async commitStorySplit(sp: StorySplitCommit): Promise<void> {
    const states: Buffer[] = [];
    const payload = {
      fence: this.fence,
      from: storyPayload(sp.from, states),
      into: storyPayload(sp.into, states),
      moved: sp.moved,
      events: sp.events.map((e) => eventPayload(e, states)),
      split: JSON.stringify({ from: sp.from.record.id, articles: sp.moved.length, score: sp.score, at: sp.at }),
      messages: messagePayload(sp.messages),
      correction: sp.correction?.id ?? null,
      correctionRecord: sp.correction ? JSON.stringify(sp.correction) : null,
    };
    try {
      await this.scripts.commitStorySplit(this.k.counts, this.k.prefix, JSON.stringify(payload), ...states);
    } catch (err) {
      throw writeError(err, `cannot split story ${sp.into.record.id} off ${sp.from.record.id}`);
    }
  }

  async storyMembers(storyId: string): Promise<StoryMember[]> {
    const ids = await this.redis.zrange(this.k.storyArticles(storyId), '0', '-1');
    const rows = (await pipelined(this.redis, ids, (p, id) => p.hmget(this.k.article(id), 'meta', 'story-names', 'story-vector'))) as (
      (string | null)[] | null
    )[];
    return rows.flatMap((r) => {
      if (!r?.[0]) return [];
      const a = JSON.parse(r[0]) as ArticleMeta;
      return [
        {
          articleId: a.id,
          title: a.title,
          outlet: a.outlet,
          published: a.published ?? a.fetched,
          isCopy: a.duplicateOf !== null,
          names: r[1] ? (JSON.parse(r[1]) as string[]) : [],
          vector: r[2] ? decodeVector(Buffer.from(r[2], 'base64')) : null,
        },
      ];
    });
  }

  async consolidationOwed(): Promise<number | null> {
    const v = await this.redis.get(this.k.consolidationOwed);
    return v === null ? null : Number(v);
  }

  async settleConsolidation(articles: number): Promise<void> {
    try {
      await this.scripts.settleConsolidation(this.k.counts, this.k.prefix, JSON.stringify({ fence: this.fence, articles }));
    } catch (err) {
      throw writeError(err, 'cannot settle the consolidation pass');
    }
  }

  async putEventStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    await this.putStates('event', states);
  }

  async putStoryStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    await this.putStates('story', states);
  }

  private async putStates(kind: 'event' | 'story', states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    if (states.length === 0) return;
    try {
      await this.scripts.putStates(
        this.k.counts,
        this.k.prefix,
        JSON.stringify({ fence: this.fence, kind, ids: states.map((s) => s.id) }),
        ...states.map((s) => Buffer.from(s.state.buffer, s.state.byteOffset, s.state.byteLength)),
      );
    } catch (err) {
      throw writeError(err, `cannot store the state of ${states.length} ${kind}(s)`);
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

  /** The undo of an analyst's story merge through commit-story-unmerge.lua (called by the corrections part). */
  private async runStoryUnmerge(u: StoryUnmergeCommit): Promise<void> {
    const states: Buffer[] = [];
    const payload = {
      fence: this.fence,
      from: storyPayload(u.from, states),
      into: storyPayload(u.into, states),
      articles: u.articles,
      events: u.events,
      earlier: u.earlier,
      id: u.correction.id,
      undoes: u.correction.undoes,
      messages: messagePayload(u.messages),
    };
    try {
      await this.scripts.commitStoryUnmerge(this.k.counts, this.k.prefix, JSON.stringify(payload), JSON.stringify(u.correction), ...states);
    } catch (err) {
      throw writeError(err, `cannot undo the merge of story ${u.from.record.id}`);
    }
  }

  /** The undo of an analyst's story split through commit-story-unsplit.lua (called by the corrections part). */
  private async runStoryUnsplit(u: StoryUnsplitCommit): Promise<void> {
    const states: Buffer[] = [];
    const payload = {
      fence: this.fence,
      from: storyPayload(u.from, states),
      into: u.into,
      moved: u.moved,
      events: u.events.map((e) => eventPayload(e, states)),
      id: u.correction.id,
      undoes: u.correction.undoes,
      messages: messagePayload(u.messages),
    };
    try {
      await this.scripts.commitStoryUnsplit(this.k.counts, this.k.prefix, JSON.stringify(payload), JSON.stringify(u.correction), ...states);
    } catch (err) {
      throw writeError(err, `cannot undo the split of story ${u.into}`);
    }
  }

  /** One correction through commit-correction.lua (called by the corrections part). */
  private async runCorrection(c: CorrectionCommit): Promise<void> {
    const states: Buffer[] = [];
    const payload = {
      fence: this.fence,
      sentences: c.sentences.map((k) => [k.articleId, String(k.sentenceIndex)]),
      links: c.links.map((l) => [
        l.articleId,
        String(l.sentenceIndex),
        l.eventId,
        JSON.stringify({ score: l.score, rank: l.rank, evidence: l.evidence }),
      ]),
      removed: c.removed,
      events: c.events.map((e) => eventPayload(e, states)),
      id: c.record.id,
      undoes: c.record.undoes,
      messages: messagePayload(c.messages),
    };
    try {
      await this.scripts.commitCorrection(this.k.counts, this.k.prefix, JSON.stringify(payload), JSON.stringify(c.record), ...states);
    } catch (err) {
      throw writeError(err, `cannot commit correction ${c.record.id}`);
    }
  }

  async linkedMentions(eventId: string): Promise<LinkedMention[]> {
    const members = await this.redis.smembers(this.k.eventLinks(eventId));
    return (await this.readLinked(members, [eventId])).map(({ mention, links }) => ({ mention, ...links[0]! }));
  }

  async linkedToBoth(a: string, b: string): Promise<SharedMention[]> {
    const members = await this.redis.sinter(this.k.eventLinks(a), this.k.eventLinks(b));
    return (await this.readLinked(members, [a, b])).map(({ mention, links }) => ({ mention, links: [links[0]!, links[1]!] }));
  }

  /** The mentions `article\nindex` with their links to each of `events` (all present), oldest first. */
  private async readLinked(
    members: readonly string[],
    events: readonly string[],
  ): Promise<{ mention: LinkedMention['mention']; links: SharedLink[] }[]> {
    const per = 3 + events.length;
    const rows = await pipelined(this.redis, members, (p, m) => {
      const [article, idx] = splitMember(m);
      p.hget(this.k.mentions(article), idx).hget(this.k.sentenceText(article), idx).hget(this.k.mentionVectors(article), idx);
      for (const ev of events) p.hget(this.k.links(article), `${idx}\n${ev}`);
    });
    const out = members.flatMap((m, i) => {
      const [articleId, idx] = splitMember(m);
      const [mention, text, vector, ...links] = rows.slice(i * per, i * per + per) as (string | null)[];
      if (!mention || links.some((l) => !l)) return [];
      const mm = JSON.parse(mention) as Pick<
        Mention,
        'outlet' | 'published' | 'eventness' | 'participants' | 'places' | 'times' | 'isCopy'
      >;
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
          links: links
            .map((l) => JSON.parse(l!) as { score: number; rank: number; evidence?: LinkEvidence })
            .map(({ rank, score, evidence }) => ({ rank, score, ...(evidence?.refersBack ? { refersBack: true } : {}) })),
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

  async eventLabels(ids: readonly string[]): Promise<Map<string, string>> {
    const labels = ids.length
      ? ((await pipelined(this.redis, ids, (p, id) => p.hget(this.k.event(id), 'label'))) as (string | null)[])
      : [];
    return new Map(ids.flatMap((id, i) => (labels[i] == null ? [] : [[id, labels[i]!] as [string, string]])));
  }

  async recentEventIds(articles: number): Promise<string[]> {
    const ids = await this.redis.zrevrange(this.k.articles, 0, articles - 1);
    const fields = (await pipelined(this.redis, ids, (p, id) => p.hkeys(this.k.links(id)))) as string[][];
    return [...new Set(fields.flat().map((f) => f.slice(f.indexOf('\n') + 1)))].sort();
  }

  async loadLinkerState(): Promise<LinkerSnapshot> {
    const ids = await this.redis.zrange(this.k.events, '0', '-1');
    const states = (await pipelined(this.redis, ids, (p, id) => p.hgetBuffer(this.k.event(id), 'state'))) as (Buffer | null)[];
    const storyIds = await this.redis.zrange(this.k.stories, '0', '-1');
    const storyStates = (await pipelined(this.redis, storyIds, (p, id) => p.hgetBuffer(this.k.story(id), 'state'))) as (Buffer | null)[];
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

  async claimVectorSpace(space: string): Promise<string> {
    await this.redis.set(this.k.vectorSpace, space, 'NX');
    return (await this.redis.get(this.k.vectorSpace))!;
  }

  async recentSketches(days: number): Promise<{ id: string; time: number; sketch: Uint32Array }[]> {
    const newest = await this.redis.zrevrange(this.k.articlesByTime, 0, 0, 'WITHSCORES');
    if (newest.length < 2) return [];
    const ids = await this.redis.zrangebyscore(this.k.articlesByTime, String(Number(newest[1]) - days * 86_400_000), '+inf', 'WITHSCORES');
    const pairs: [string, number][] = [];
    for (let i = 0; i < ids.length; i += 2) pairs.push([ids[i]!, Number(ids[i + 1])]);
    const sketches = (await pipelined(this.redis, pairs, (p, [id]) => p.hget(this.k.article(id), 'sketch'))) as (string | null)[];
    return pairs.flatMap(([id, time], i) => {
      const b = sketches[i];
      if (!b) return [];
      return [{ id, time, sketch: decodeWords(Buffer.from(b, 'base64')) }];
    });
  }

  /** Used memory of the Redis server, bytes (bench). */
  async usedMemory(): Promise<number> {
    const info = await this.redis.info('memory');
    return Number(/used_memory:(\d+)/.exec(info)?.[1] ?? 0);
  }

  /** Deletes every key of this partition (tests and decommissioning; not part of the contract). */
  async dropPartition(): Promise<number> {
    return deleteMatching(this.redis, this.k.pattern);
  }

  unavailable(err?: unknown): boolean {
    return !isReady(this.redis) || (err !== undefined && isConnectionError(err));
  }

  async close(): Promise<void> {
    await closeClient(this.redis);
  }
}

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
    dueAt: Date.parse(m.created),
    ...namedIn(m.body),
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

/** A failed write script as a StrandError: a fenced-off linker's write, or a store failure. */
function writeError(err: unknown, what: string): StrandError {
  const message = (err as Error).message;
  if (message.includes('STRAND_LEASE_LOST'))
    return new StrandError('STRAND_LEASE_LOST', `${what}: this linker no longer holds the partition lease; nothing was written`, {
      cause: err,
    });
  return new StrandError('STRAND_STORE_FAILED', `${what}: ${message}`, { cause: err });
}
