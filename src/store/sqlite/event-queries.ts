/** The SQLite store's read side for the API: events, stories, articles, outlets and counts. */
import type Database from 'better-sqlite3';
import type { LinkEvidence, TimeExpression } from '../../records.js';
import type {
  ArticleDetail,
  EventDetail,
  EventMention,
  EventPage,
  EventQueries,
  EventQuery,
  MergeRecord,
  SplitRecord,
  StoreCounts,
  StoryDetail,
  StoryPage,
  StoryQuery,
} from '../store.js';
import { searchWords } from '../store.js';
import { EVENT_SELECT, type Row, STORY_SELECT, likePattern, toStorySummary, toSummary } from './rows.js';

export class SqliteEventQueries implements EventQueries {
  private readonly st;

  constructor(private readonly db: Database.Database) {
    this.st = {
      story: db.prepare(`${STORY_SELECT} WHERE s.id = ?`),
      storyMergedInto: db.prepare('SELECT into_id FROM story_merges WHERE from_id = ?').pluck(),
      event: db.prepare(`${EVENT_SELECT} WHERE e.id = ?`),
      eventMentions: db.prepare(`
        SELECT l.article_id, l.sentence_idx, l.score, l.rank, l.evidence, a.title, a.url, a.outlet, m.published, m.is_copy, m.times, s.text
        FROM links l
        JOIN articles a ON a.id = l.article_id
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        LEFT JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = ? ORDER BY m.published, l.article_id, l.sentence_idx`),
      splitsOf: db.prepare(
        'SELECT into_id, from_id, mentions, score, at FROM splits WHERE from_id = @id OR into_id = @id ORDER BY at, into_id',
      ),
      article: db.prepare('SELECT * FROM articles WHERE id = ?'),
      articleSentences: db.prepare('SELECT idx, text, start, end, eventness FROM sentences WHERE article_id = ? ORDER BY idx'),
      articleMentions: db.prepare('SELECT sentence_idx FROM mentions WHERE article_id = ?').pluck(),
      articleLinks:
        db.prepare(`SELECT l.sentence_idx, l.event_id, l.score, l.rank, l.evidence, e.label FROM links l JOIN events e ON e.id = l.event_id
        WHERE l.article_id = ? ORDER BY l.sentence_idx, l.rank`),
      outlets: db.prepare('SELECT outlet, count(*) AS articles FROM articles GROUP BY outlet ORDER BY outlet'),
      counts: db.prepare(`SELECT (SELECT count(*) FROM articles) AS articles, (SELECT count(*) FROM sentences) AS sentences,
        (SELECT count(*) FROM mentions) AS mentions, (SELECT count(*) FROM links) AS links, (SELECT count(*) FROM events) AS events,
        (SELECT count(*) FROM stories) AS stories`),
    };
  }

  async listEvents(q: EventQuery): Promise<EventPage> {
    const where: string[] = [];
    const params: Record<string, unknown> = {};
    if (q.from) {
      where.push('e.last_seen >= @from');
      params.from = q.from;
    }
    if (q.to) {
      where.push('e.first_seen <= @to');
      params.to = /^\d{4}-\d{2}-\d{2}$/.test(q.to) ? `${q.to}T23:59:59.999Z` : q.to;
    }
    if (q.outlet) {
      where.push('EXISTS (SELECT 1 FROM event_outlets eo WHERE eo.event_id = e.id AND eo.outlet = @outlet)');
      params.outlet = q.outlet;
    }
    if (q.minOutlets) {
      where.push('(SELECT count(*) FROM event_outlets eo WHERE eo.event_id = e.id) >= @minOutlets');
      params.minOutlets = q.minOutlets;
    }
    for (const field of ['participant', 'place'] as const) {
      if (!q[field]) continue;
      where.push(`EXISTS (SELECT 1 FROM json_each(e.${field}s) j WHERE j.value LIKE @${field} ESCAPE '\\')`);
      params[field] = likePattern(q[field].trim());
    }
    if (q.story) {
      where.push('e.story_id = coalesce((SELECT into_id FROM story_merges WHERE from_id = @story), @story)');
      params.story = q.story;
    }
    searchWords(q.text).forEach((word, i) => {
      where.push(`(e.label LIKE @w${i} ESCAPE '\\' OR EXISTS (SELECT 1 FROM links l JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = e.id AND s.text LIKE @w${i} ESCAPE '\\'))`);
      params[`w${i}`] = likePattern(word);
    });
    const filter = where.length ? `WHERE ${where.join(' AND ')}` : '';
    const order =
      q.sort === 'outlets'
        ? 'outlet_count DESC, e.last_seen DESC'
        : q.sort === 'mentions'
          ? 'e.mention_count DESC, e.last_seen DESC'
          : 'e.last_seen DESC';
    const total = this.db.prepare(`SELECT count(*) FROM events e ${filter}`).pluck().get(params) as number;
    const rows = this.db
      .prepare(`${EVENT_SELECT} ${filter} ORDER BY ${order}, e.id LIMIT @limit OFFSET @offset`)
      .all({ ...params, limit: q.limit, offset: q.offset }) as Row[];
    return { total, events: rows.map(toSummary) };
  }

  async getEvent(id: string): Promise<EventDetail | null> {
    const row = this.st.event.get(id) as Row | undefined;
    if (!row) return null;
    const mentions = (this.st.eventMentions.all(id) as Row[]).map((r): EventMention => ({
      articleId: r.article_id as string,
      articleTitle: r.title as string,
      articleUrl: (r.url as string | null) ?? null,
      outlet: r.outlet as string,
      published: r.published as string,
      isCopy: r.is_copy === 1,
      sentenceIndex: r.sentence_idx as number,
      text: (r.text as string | null) ?? null,
      score: r.score as number,
      rank: r.rank as number,
      evidence: JSON.parse(r.evidence as string) as LinkEvidence,
      times: JSON.parse(r.times as string) as TimeExpression[],
    }));
    return { event: toSummary(row), mentions, merges: await this.mergesInto(id), splits: await this.splitsOf(id) };
  }

  async splitsOf(eventId: string): Promise<SplitRecord[]> {
    return (this.st.splitsOf.all({ id: eventId }) as Row[]).map((r) => ({
      from: r.from_id as string,
      into: r.into_id as string,
      mentions: r.mentions as number,
      score: r.score as number,
      at: r.at as string,
    }));
  }

  async mergedInto(id: string): Promise<string | null> {
    return (this.db.prepare('SELECT into_id FROM merges WHERE from_id = ?').pluck().get(id) as string | undefined) ?? null;
  }

  async mergesInto(id: string): Promise<MergeRecord[]> {
    return (this.db.prepare('SELECT from_id, into_id, score, at FROM merges WHERE into_id = ? ORDER BY at, from_id').all(id) as Row[]).map(
      (r) => ({ from: r.from_id as string, into: r.into_id as string, score: r.score as number, at: r.at as string }),
    );
  }

  async listStories(q: StoryQuery): Promise<StoryPage> {
    const where: string[] = [];
    const params: Record<string, unknown> = {};
    if (q.from) {
      where.push('s.last_seen >= @from');
      params.from = q.from;
    }
    if (q.to) {
      where.push('s.first_seen <= @to');
      params.to = /^\d{4}-\d{2}-\d{2}$/.test(q.to) ? `${q.to}T23:59:59.999Z` : q.to;
    }
    if (q.outlet) {
      where.push('EXISTS (SELECT 1 FROM articles a WHERE a.story_id = s.id AND a.outlet = @outlet)');
      params.outlet = q.outlet;
    }
    if (q.minOutlets) {
      where.push('(SELECT count(DISTINCT outlet) FROM articles a WHERE a.story_id = s.id) >= @minOutlets');
      params.minOutlets = q.minOutlets;
    }
    for (const field of ['participant', 'place'] as const) {
      if (!q[field]) continue;
      where.push(
        `EXISTS (SELECT 1 FROM events e, json_each(e.${field}s) j WHERE e.story_id = s.id AND j.value LIKE @${field} ESCAPE '\\')`,
      );
      params[field] = likePattern(q[field].trim());
    }
    searchWords(q.text).forEach((word, i) => {
      where.push(
        `(s.label LIKE @w${i} ESCAPE '\\' OR s.names LIKE @w${i} ESCAPE '\\' OR EXISTS (SELECT 1 FROM articles a WHERE a.story_id = s.id AND a.title LIKE @w${i} ESCAPE '\\'))`,
      );
      params[`w${i}`] = likePattern(word);
    });
    const filter = where.length ? `WHERE ${where.join(' AND ')}` : '';
    const order =
      q.sort === 'outlets'
        ? 'outlet_count DESC, s.last_seen DESC'
        : q.sort === 'articles'
          ? 's.article_count DESC, s.last_seen DESC'
          : 's.last_seen DESC';
    const total = this.db.prepare(`SELECT count(*) FROM stories s ${filter}`).pluck().get(params) as number;
    const rows = this.db
      .prepare(`${STORY_SELECT} ${filter} ORDER BY ${order}, s.id LIMIT @limit OFFSET @offset`)
      .all({ ...params, limit: q.limit, offset: q.offset }) as Row[];
    return { total, stories: rows.map(toStorySummary) };
  }

  async getStory(id: string): Promise<StoryDetail | null> {
    const row = this.st.story.get(id) as Row | undefined;
    if (!row) return null;
    const events = (this.db.prepare(`${EVENT_SELECT} WHERE e.story_id = ? ORDER BY e.first_seen, e.id`).all(id) as Row[]).map(toSummary);
    const articles = (
      this.db
        .prepare(
          `SELECT id, title, outlet, url, published, duplicate_of FROM articles WHERE story_id = ?
      ORDER BY coalesce(published, fetched), seq`,
        )
        .all(id) as Row[]
    ).map((r) => ({
      id: r.id as string,
      title: r.title as string,
      outlet: r.outlet as string,
      url: (r.url as string | null) ?? null,
      published: (r.published as string | null) ?? null,
      duplicateOf: (r.duplicate_of as string | null) ?? null,
    }));
    const merges = (
      this.db.prepare('SELECT from_id, into_id, score, at FROM story_merges WHERE into_id = ? ORDER BY at, from_id').all(id) as Row[]
    ).map((r) => ({ from: r.from_id as string, into: r.into_id as string, score: r.score as number, at: r.at as string }));
    const splits = (
      this.db
        .prepare('SELECT from_id, into_id, articles, score, at FROM story_splits WHERE from_id = ? OR into_id = ? ORDER BY at, into_id')
        .all(id, id) as Row[]
    ).map((r) => ({
      from: r.from_id as string,
      into: r.into_id as string,
      articles: r.articles as number,
      score: r.score as number,
      at: r.at as string,
    }));
    return { story: toStorySummary(row), events, articles, merges, splits };
  }

  async storyMergedInto(id: string): Promise<string | null> {
    return (this.st.storyMergedInto.get(id) as string | undefined) ?? null;
  }

  async getArticle(id: string): Promise<ArticleDetail | null> {
    const a = this.st.article.get(id) as Row | undefined;
    if (!a) return null;
    const mentionIdx = new Set(this.st.articleMentions.all(id) as number[]);
    const links = this.st.articleLinks.all(id) as Row[];
    const sentences = (this.st.articleSentences.all(id) as Row[]).map((s) => ({
      index: s.idx as number,
      text: (s.text as string | null) ?? '',
      start: s.start as number,
      end: s.end as number,
      eventness: s.eventness as number,
      isMention: mentionIdx.has(s.idx as number),
      links: links
        .filter((l) => l.sentence_idx === s.idx)
        .map((l) => ({
          eventId: l.event_id as string,
          eventLabel: l.label as string,
          score: l.score as number,
          rank: l.rank as number,
          evidence: JSON.parse(l.evidence as string) as LinkEvidence,
        })),
    }));
    return {
      article: {
        id: a.id as string,
        outlet: a.outlet as string,
        url: (a.url as string | null) ?? null,
        title: a.title as string,
        published: (a.published as string | null) ?? null,
        fetched: a.fetched as string,
        language: (a.language as string | null) ?? null,
        text: (a.text as string | null) ?? null,
        contentHash: a.content_hash as string,
        duplicateOf: (a.duplicate_of as string | null) ?? null,
        copySimilarity: (a.copy_similarity as number | null) ?? null,
        source: a.source as string,
        story: (a.story_id as string | null) ?? null,
      },
      sentences,
    };
  }

  async listOutlets(): Promise<{ outlet: string; articles: number }[]> {
    return this.st.outlets.all() as { outlet: string; articles: number }[];
  }

  async counts(): Promise<StoreCounts> {
    return this.st.counts.get() as StoreCounts;
  }
}
