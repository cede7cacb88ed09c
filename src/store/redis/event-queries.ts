/**
 * The Redis store's read side for the API: events, stories, articles, outlets and counts.
 * Lists read the events (or stories) active in the time range and filter them here: the
 * cost grows with the events in range, not with the mentions.
 */
import { StrandError } from '../../errors.js';
import type { Article, LinkEvidence, TimeExpression } from '../../records.js';
import type {
  ArticleDetail,
  EventDetail,
  EventMention,
  EventPage,
  EventQueries,
  EventQuery,
  EventSummary,
  EventUpdate,
  MergeRecord,
  SplitRecord,
  StoreCounts,
  StoryDetail,
  StorySplitRecord,
  StoryPage,
  StoryQuery,
  StorySummary,
} from '../store.js';
import { searchWords } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';
import { cmp, parseMerge, pipelined, splitMember } from './pipelined.js';

/** The article fields kept as JSON in its hash (its text apart). */
export type ArticleMeta = Omit<Article, 'text' | 'presplit'>;

export class RedisEventQueries implements EventQueries {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
  ) {}

  async listEvents(q: EventQuery): Promise<EventPage> {
    const from = q.from ? Date.parse(q.from) : -Infinity;
    let ids = await this.redis.zrangebyscore(this.k.events, Number.isFinite(from) ? from : '-inf', '+inf');
    if (q.story) {
      // The story as it now stands: a merged-away id names its survivor's events.
      const inStory = new Set(await this.redis.smembers(this.k.storyEvents((await this.currentStories([q.story])).get(q.story)!)));
      ids = ids.filter((id) => inStory.has(id));
    }
    let events = listFilters(await this.summaries(ids), q).filter((e) => namesMatch(e, q));
    const words = searchWords(q.text).map((w) => w.toLowerCase());
    if (words.length) {
      const texts = (await pipelined(this.redis, events, (p, e) => p.smembers(this.k.eventLinks(e.id)))) as string[][];
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
    const rows = await pipelined(this.redis, members, (p, m) => {
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

  async mergedInto(id: string): Promise<string | null> {
    const rec = await this.redis.hget(this.k.merges, id);
    return rec ? parseMerge(id, rec).into : null;
  }

  async mergesInto(id: string): Promise<MergeRecord[]> {
    const from = await this.redis.smembers(this.k.mergedInto(id));
    const recs = from.length ? await this.redis.hmget(this.k.merges, ...from) : [];
    return from.map((f, i) => parseMerge(f, recs[i]!)).sort((a, b) => cmp(a.at, b.at) || cmp(a.from, b.from));
  }

  async listStories(q: StoryQuery): Promise<StoryPage> {
    const from = q.from ? Date.parse(q.from) : -Infinity;
    const ids = await this.redis.zrangebyscore(this.k.stories, Number.isFinite(from) ? from : '-inf', '+inf');
    let stories = listFilters(await this.storySummaries(ids), q);
    if (q.participant || q.place) {
      const members = (await pipelined(this.redis, stories, (p, s) => p.smembers(this.k.storyEvents(s.id)))) as string[][];
      const kept = await Promise.all(members.map(async (ids) => (await this.summaries(ids)).some((e) => namesMatch(e, q))));
      stories = stories.filter((_, i) => kept[i]);
    }
    const words = searchWords(q.text).map((w) => w.toLowerCase());
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
    const [splitOff, openedBy] = await Promise.all([
      this.redis.smembers(this.k.storySplitsOf(id)),
      this.redis.hget(this.k.storySplits, id),
    ]);
    const splitRecs = splitOff.length ? await this.redis.hmget(this.k.storySplits, ...splitOff) : [];
    const splits = [
      ...splitOff.map((into, i) => ({ into, ...(JSON.parse(splitRecs[i]!) as Omit<StorySplitRecord, 'into'>) })),
      ...(openedBy ? [{ into: id, ...(JSON.parse(openedBy) as Omit<StorySplitRecord, 'into'>) }] : []),
    ].sort((a, b) => cmp(a.at, b.at) || cmp(a.into, b.into));
    return { story, events, articles: await this.storyArticles(id), merges, splits };
  }

  async storyMergedInto(id: string): Promise<string | null> {
    const into = (await this.currentStories([id])).get(id)!;
    return into === id ? null : into;
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
      ? ((await pipelined(this.redis, eventIds, (p, e) => p.hget(this.k.event(e), 'label'))) as (string | null)[])
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

  /** A story's articles, earliest first. */
  private async storyArticles(id: string): Promise<StoryDetail['articles']> {
    const ids = await this.redis.zrange(this.k.storyArticles(id), '0', '-1');
    const metas = (await pipelined(this.redis, ids, (p, a) => p.hget(this.k.article(a), 'meta'))) as (string | null)[];
    return metas.flatMap((m) => {
      if (!m) return [];
      const a = JSON.parse(m) as ArticleMeta;
      return [{ id: a.id, title: a.title, outlet: a.outlet, url: a.url, published: a.published, duplicateOf: a.duplicateOf }];
    });
  }

  private async storySummaries(ids: readonly string[]): Promise<StorySummary[]> {
    const rows = (await pipelined(this.redis, ids, (p, id) =>
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
  async currentStories(ids: readonly string[]): Promise<Map<string, string>> {
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

  private async summaries(ids: readonly string[]): Promise<EventSummary[]> {
    const rows = (await pipelined(this.redis, ids, (p, id) => p.hmget(this.k.event(id), 'record', 'label', 'outlets'))) as (
      string | null
    )[][];
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
    const texts = (await pipelined(this.redis, members, (p, m) => {
      const [article, idx] = splitMember(m);
      return p.hget(this.k.sentenceText(article), idx);
    })) as (string | null)[];
    return texts.filter((t): t is string => t !== null);
  }
}

/** True when every (lower-case) word is part of one of the texts: the in-process text filter of the lists. */
/** What events and stories are filtered by alike: begun by `to` (a day means its end), reported by an outlet, by enough outlets. */
function listFilters<T extends { firstSeen: string; outlets: string[] }>(
  items: T[],
  q: { to?: string | undefined; outlet?: string | undefined; minOutlets?: number | undefined },
): T[] {
  const to = q.to ? (/^\d{4}-\d{2}-\d{2}$/.test(q.to) ? `${q.to}T23:59:59.999Z` : q.to) : null;
  return items.filter(
    (x) => (!to || x.firstSeen <= to) && (!q.outlet || x.outlets.includes(q.outlet)) && (!q.minOutlets || x.outlets.length >= q.minOutlets),
  );
}

/** An event passes the participant and place filters (a name holding the words, any case). */
function namesMatch(
  e: { participants: string[]; places: string[] },
  q: { participant?: string | undefined; place?: string | undefined },
): boolean {
  const holds = (names: string[], words: string | undefined) =>
    !words || names.some((n) => n.toLowerCase().includes(words.trim().toLowerCase()));
  return holds(e.participants, q.participant) && holds(e.places, q.place);
}

function hasEveryWord(words: readonly string[], texts: readonly string[]): boolean {
  const hay = texts.map((t) => t.toLowerCase());
  return words.every((w) => hay.some((t) => t.includes(w)));
}

/** The order of a list: by a count, largest first, then (or else) most recently active first, then id. */
function listOrder<T extends { lastSeen: string; id: string }>(count: ((x: T) => number) | null): (a: T, b: T) => number {
  const byRecent = (a: T, b: T): number => cmp(b.lastSeen, a.lastSeen) || cmp(a.id, b.id);
  return count ? (a, b) => count(b) - count(a) || byRecent(a, b) : byRecent;
}
