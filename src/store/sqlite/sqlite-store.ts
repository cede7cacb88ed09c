/**
 * The embedded Store on SQLite (better-sqlite3): one file, nothing else to install.
 * Write-ahead logging, so a process killed at any point loses no committed transaction and
 * readers (the API) never block the writer (the pipeline). Every article's results are one
 * transaction: after a crash an article is either wholly stored or not at all.
 */
import { mkdirSync } from 'node:fs';
import { dirname } from 'node:path';
import Database from 'better-sqlite3';
import type { Logger } from '../../logger.js';
import { StrandError } from '../../errors.js';
import type { LinkEvidence, TimeExpression } from '../../records.js';
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
  EventUpdate,
  FeedEntry,
  LinkTally,
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
  StoryDetail,
  StoryMergeCommit,
  StoryPage,
  StoryQuery,
  StorySummary,
  StoryUpdate,
} from '../store.js';
import { ERASED_LABEL, drawnFrom } from '../store.js';
import { deserialiseEvent, serialiseEvent } from '../../link/event-state.js';
import { decodeVector, decodeWords, encodeVector, encodeWords } from '../vector-codec.js';
import { canonicalUrl } from '../../ingest/canonical-url.js';
import { MIGRATIONS } from './schema.js';
import { type WalCheckpointer, startWalCheckpointer } from './wal-checkpointer.js';
import { whenFree } from './when-free.js';

type Row = Record<string, unknown>;

/** Options of the SQLite store. */
export interface SqliteStoreOptions {
  /** Per-article document-frequency rows are folded into one snapshot this often. Default 2000. */
  idfSnapshotEvery?: number;
  /** Checkpoint the write-ahead log on a thread of its own (file stores only). Default true. */
  backgroundCheckpoint?: boolean;
  /** Where a failing checkpoint thread, and a write waiting for a busy file, are reported. */
  logger?: Pick<Logger, 'warn'>;
  /** SQLite's own wait for a lock before it answers busy, ms (a busy write then waits again, when-free.ts). Default 5,000. */
  busyTimeoutMs?: number;
}

/** Opens (creating if needed) a SQLite store at `path`; ':memory:' for tests. */
export function openSqliteStore(path: string, options: SqliteStoreOptions = {}): SqliteStore {
  let db: Database.Database;
  try {
    if (path !== ':memory:') mkdirSync(dirname(path), { recursive: true });
    db = new Database(path);
    db.pragma('journal_mode = WAL');
    // NORMAL is durable against a killed process under WAL (only power loss can drop the
    // last transactions), and several times faster than FULL for small commits.
    db.pragma('synchronous = NORMAL');
    db.pragma('foreign_keys = OFF');
    db.pragma(`busy_timeout = ${options.busyTimeoutMs ?? 5000}`);
    // 64 MB of page cache (the default is 2 MB): event rows are rewritten all the time.
    db.pragma('cache_size = -65536');
    // After a checkpoint that let the log start over, its file is cut back to this size.
    db.pragma('journal_size_limit = 67108864');
    // Zero what is freed within a page (no extra writes), so text erased later leaves no
    // stale copy behind in pages that rows moved out of when they were reorganised.
    db.pragma('secure_delete = FAST');
    migrate(db);
  } catch (err) {
    throw new StrandError('STRAND_STORE_FAILED', `cannot open SQLite store at ${path}: ${(err as Error).message}`, { cause: err });
  }
  const checkpointer =
    path !== ':memory:' && options.backgroundCheckpoint !== false ? startWalCheckpointer(db, path, options.logger) : undefined;
  return new SqliteStore(db, options.idfSnapshotEvery ?? IDF_SNAPSHOT_EVERY, checkpointer, options.logger);
}

function migrate(db: Database.Database): void {
  const version = db.pragma('user_version', { simple: true }) as number;
  for (let v = version; v < MIGRATIONS.length; v++) {
    db.transaction(() => {
      db.exec(MIGRATIONS[v]!);
      db.pragma(`user_version = ${v + 1}`);
    })();
  }
}

/** The SQLite implementation of Store. */
export class SqliteStore implements Store {
  private readonly st;
  private readonly commitTx: (c: ArticleCommit) => CommitResult;
  private readonly commitManyTx: (cs: readonly ArticleCommit[]) => CommitResult[];
  private readonly mergeTx: (m: MergeCommit) => void;
  private readonly splitTx: (s: SplitCommit) => void;

  constructor(
    private readonly db: Database.Database,
    private readonly idfSnapshotEvery: number = IDF_SNAPSHOT_EVERY,
    private readonly checkpointer?: WalCheckpointer,
    private readonly log?: Pick<Logger, 'warn'>,
  ) {
    this.st = {
      hasArticle: db.prepare('SELECT 1 FROM articles WHERE id = ?').pluck(),
      eventLabel: db.prepare('SELECT label FROM events WHERE id = ?').pluck(),
      setLabel: db.prepare('UPDATE events SET label = ? WHERE id = ?'),
      // The text of an event's earliest linked sentence that still has its text (for relabelling).
      earliestText: db
        .prepare(
          `SELECT s.text FROM links l JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        WHERE l.event_id = ? AND s.text IS NOT NULL ORDER BY m.published, l.article_id, l.sentence_idx LIMIT 1`,
        )
        .pluck(),
      sentenceText: db.prepare('SELECT text FROM sentences WHERE article_id = ? AND idx = ?').pluck(),
      byUrl: db.prepare('SELECT id FROM articles WHERE canonical_url = ? ORDER BY seq LIMIT 1').pluck(),
      byHash: db.prepare('SELECT id FROM articles WHERE content_hash = ? ORDER BY seq LIMIT 1').pluck(),
      insArticle:
        db.prepare(`INSERT INTO articles (id, outlet, url, title, published, fetched, language, text, content_hash, duplicate_of, source, copy_similarity, sketch, canonical_url, story_id)
        VALUES (@id, @outlet, @url, @title, @published, @fetched, @language, @text, @contentHash, @duplicateOf, @source, @copySimilarity, @sketch, @canonicalUrl,
          coalesce((SELECT into_id FROM story_merges WHERE from_id = @storyId), @storyId))`),
      insSentence: db.prepare('INSERT INTO sentences (article_id, idx, text, start, end, eventness) VALUES (?, ?, ?, ?, ?, ?)'),
      insMention:
        db.prepare(`INSERT INTO mentions (article_id, sentence_idx, outlet, published, eventness, participants, places, times, is_copy, vector)
        VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`),
      insLink: db.prepare('INSERT INTO links (article_id, sentence_idx, event_id, score, rank, evidence) VALUES (?, ?, ?, ?, ?, ?)'),
      // story_id is set when the event opens; afterwards only a story merge moves it.
      upEvent:
        db.prepare(`INSERT INTO events (id, label, first_seen, last_seen, time_start, time_end, participants, places, mention_count, version, state, story_id)
        VALUES (@id, @label, @firstSeen, @lastSeen, @timeStart, @timeEnd, @participants, @places, @mentionCount, @version, @state,
          coalesce((SELECT into_id FROM story_merges WHERE from_id = @story), @story))
        ON CONFLICT(id) DO UPDATE SET first_seen = excluded.first_seen, last_seen = excluded.last_seen,
          time_start = excluded.time_start, time_end = excluded.time_end, participants = excluded.participants, places = excluded.places,
          mention_count = excluded.mention_count, version = excluded.version, state = excluded.state`),
      upStory: db.prepare(`INSERT INTO stories (id, label, first_seen, last_seen, article_count, names, version, state)
        VALUES (@id, @label, @firstSeen, @lastSeen, @articleCount, @names, @version, @state)
        ON CONFLICT(id) DO UPDATE SET first_seen = excluded.first_seen, last_seen = excluded.last_seen, article_count = excluded.article_count,
          names = excluded.names, version = excluded.version, state = excluded.state`),
      storyStates: db.prepare('SELECT state FROM stories').pluck(),
      storyMergedInto: db.prepare('SELECT into_id FROM story_merges WHERE from_id = ?').pluck(),
      story: db.prepare(`${STORY_SELECT} WHERE s.id = ?`),
      delOutlets: db.prepare('DELETE FROM event_outlets WHERE event_id = ?'),
      insOutlet: db.prepare('INSERT INTO event_outlets (event_id, outlet, mentions, independent) VALUES (?, ?, ?, ?)'),
      insIdfLog: db.prepare('INSERT INTO idf_log (docs, data) VALUES (?, ?)'),
      addTally: db.prepare(`INSERT INTO link_tally (id, mentions, high) VALUES (1, @mentions, @high)
        ON CONFLICT (id) DO UPDATE SET mentions = mentions + excluded.mentions, high = high + excluded.high`),
      tally: db.prepare('SELECT mentions, high FROM link_tally WHERE id = 1'),
      idfLogCount: db.prepare('SELECT count(*) FROM idf_log').pluck(),
      idfLogs: db.prepare('SELECT docs, data FROM idf_log ORDER BY seq').raw(),
      idfSnapshot: db.prepare('SELECT docs, data FROM idf_snapshot WHERE id = 1').raw(),
      putIdfSnapshot: db.prepare('INSERT OR REPLACE INTO idf_snapshot (id, docs, data) VALUES (1, ?, ?)'),
      clearIdfLog: db.prepare('DELETE FROM idf_log'),
      insMessage: db.prepare('INSERT OR IGNORE INTO outbox (id, type, body, created) VALUES (?, ?, ?, ?)'),
      insDelivery: db.prepare(
        `INSERT OR IGNORE INTO deliveries (message_id, subscriber, status, attempts, next_at, last_error) VALUES (?, ?, 'pending', 0, ?, NULL)`,
      ),
      eventStates: db.prepare('SELECT state FROM events').pluck(),
      idfRows: db.prepare('SELECT feature, df FROM idf').raw(),
      docs: db.prepare(`SELECT value FROM meta WHERE key = 'idf_docs'`).pluck(),
      event: db.prepare(`${EVENT_SELECT} WHERE e.id = ?`),
      eventMentions: db.prepare(`
        SELECT l.article_id, l.sentence_idx, l.score, l.rank, l.evidence, a.title, a.url, a.outlet, m.published, m.is_copy, m.times, s.text
        FROM links l
        JOIN articles a ON a.id = l.article_id
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        LEFT JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = ? ORDER BY m.published, l.article_id, l.sentence_idx`),
      linkedMentions: db.prepare(`
        SELECT l.article_id, l.sentence_idx, l.score, l.rank, m.outlet, m.published, m.eventness, m.participants, m.places, m.times, m.is_copy, m.vector, s.text
        FROM links l
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        LEFT JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = ? ORDER BY m.published, l.article_id, l.sentence_idx`),
      linkedToBoth: db.prepare(`
        SELECT l.article_id, l.sentence_idx, l.score, l.rank, k.score AS score_b, k.rank AS rank_b,
          m.outlet, m.published, m.eventness, m.participants, m.places, m.times, m.is_copy, m.vector, s.text
        FROM links l
        JOIN links k ON k.article_id = l.article_id AND k.sentence_idx = l.sentence_idx AND k.event_id = @b
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        LEFT JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = @a ORDER BY m.published, l.article_id, l.sentence_idx`),
      moveLink: db.prepare('UPDATE links SET event_id = @into WHERE article_id = @article AND sentence_idx = @idx AND event_id = @from'),
      insSplit: db.prepare('INSERT OR REPLACE INTO splits (into_id, from_id, mentions, score, at) VALUES (?, ?, ?, ?, ?)'),
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
      due: db.prepare(`SELECT d.*, o.type, o.body, o.created FROM deliveries d JOIN outbox o ON o.id = d.message_id
        WHERE d.status = 'pending' AND d.next_at <= ? AND d.subscriber NOT IN (SELECT value FROM json_each(?)) ORDER BY d.next_at LIMIT ?`),
      dead: db.prepare(`SELECT d.*, o.type, o.body, o.created FROM deliveries d JOIN outbox o ON o.id = d.message_id
        WHERE d.status = 'dead' ORDER BY d.next_at DESC LIMIT ?`),
      attempt: db.prepare(
        'UPDATE deliveries SET status = ?, attempts = ?, next_at = ?, last_error = ? WHERE message_id = ? AND subscriber = ?',
      ),
    };
    this.commitTx = db.transaction((c: ArticleCommit): CommitResult => this.commitInTx(c));
    this.commitManyTx = db.transaction((cs: readonly ArticleCommit[]): CommitResult[] => cs.map((c) => this.commitInTx(c)));
    this.mergeTx = db.transaction((m: MergeCommit): void => this.mergeInTx(m));
    this.splitTx = db.transaction((sp: SplitCommit): void => this.splitInTx(sp));
  }

  async hasArticle(id: string): Promise<boolean> {
    return this.st.hasArticle.get(id) !== undefined;
  }

  async findByUrl(canonical: string): Promise<string | null> {
    return (this.st.byUrl.get(canonical) as string | undefined) ?? null;
  }

  async findByContentHash(hash: string): Promise<string | null> {
    return (this.st.byHash.get(hash) as string | undefined) ?? null;
  }

  async commitArticle(c: ArticleCommit): Promise<CommitResult> {
    return this.write(`cannot store article ${c.article.id}`, () => this.commitTx(c));
  }

  async commitArticles(cs: readonly ArticleCommit[]): Promise<CommitResult[]> {
    return this.write(`cannot store ${cs.length} article(s) from ${cs[0]?.article.id ?? '(none)'}`, () => this.commitManyTx(cs));
  }

  /** Runs a write, waiting while the file is busy (when-free.ts); logs each wait. */
  private write<T>(what: string, fn: () => T): Promise<T> {
    return whenFree(what, fn, {
      onWait: (attempt, err) =>
        this.log?.warn(
          { attempt, code: (err as { code?: string }).code, err: (err as Error).message },
          'SQLite file busy; the write waits and goes again',
        ),
    });
  }

  private commitInTx(c: ArticleCommit): CommitResult {
    const st = this.st;
    if (st.hasArticle.get(c.article.id) !== undefined) return 'already-stored';
    st.insArticle.run({
      ...c.article,
      copySimilarity: c.article.duplicateOf ? (c.article.copySimilarity ?? 1) : null,
      sketch: c.sketch ? encodeWords(c.sketch) : null,
      canonicalUrl: canonicalUrl(c.article.url),
      storyId: c.storyId ?? null,
    });
    if (c.story) this.upsertStory(c.story);
    for (const s of c.sentences) st.insSentence.run(c.article.id, s.index, s.text, s.start, s.end, s.eventness);
    for (const m of c.mentions) {
      st.insMention.run(
        m.articleId,
        m.sentenceIndex,
        m.outlet,
        m.published,
        m.eventness,
        JSON.stringify(m.participants),
        JSON.stringify(m.places),
        JSON.stringify(m.times),
        m.isCopy ? 1 : 0,
        m.vector ? encodeVector(m.vector) : null,
      );
    }
    for (const l of c.links) st.insLink.run(l.articleId, l.sentenceIndex, l.eventId, l.score, l.rank, JSON.stringify(l.evidence));
    for (const u of c.events) this.upsertEvent(u);
    if (c.idf && (c.idf.docs > 0 || c.idf.df.size > 0)) {
      st.insIdfLog.run(c.idf.docs, packIdf(c.idf.df));
      if ((st.idfLogCount.get() as number) >= this.idfSnapshotEvery) this.snapshotIdf();
    }
    if (c.tally && c.tally.mentions > 0) st.addTally.run(c.tally);
    this.queue(c.messages);
    return 'stored';
  }

  /** Folds the per-article rows into the snapshot (inside the caller's transaction). */
  private snapshotIdf(): void {
    const { docs, df } = this.readIdf();
    this.st.putIdfSnapshot.run(docs, packIdf(df));
    this.st.clearIdfLog.run();
  }

  /** Document frequencies: the version-1 table, the snapshot, then the rows after it. */
  private readIdf(): { docs: number; df: Map<number, number> } {
    const df = new Map<number, number>();
    let docs = Number(this.st.docs.get() ?? 0);
    for (const [f, n] of this.st.idfRows.all() as [number, number][]) df.set(f, n);
    const add = (d: number, blob: Buffer): void => {
      docs += d;
      for (const [f, n] of unpackIdf(blob)) df.set(f, (df.get(f) ?? 0) + n);
    };
    const snap = this.st.idfSnapshot.get() as [number, Buffer] | undefined;
    if (snap) add(snap[0], snap[1]);
    for (const [d, blob] of this.st.idfLogs.all() as [number, Buffer][]) add(d, blob);
    return { docs, df };
  }

  /** Writes a story; a story merged away stays gone (a writer that had not heard of the merge files its article under the survivor). */
  private upsertStory({ record: r, state }: StoryUpdate): void {
    if (this.st.storyMergedInto.get(r.id) !== undefined) return;
    this.st.upStory.run({ ...r, names: JSON.stringify(r.names), state: Buffer.from(state.buffer, state.byteOffset, state.byteLength) });
  }

  private upsertEvent({ record: r, outlets, state }: EventUpdate): void {
    this.st.upEvent.run({
      ...r,
      participants: JSON.stringify(r.participants),
      places: JSON.stringify(r.places),
      state: Buffer.from(state.buffer, state.byteOffset, state.byteLength),
    });
    this.st.delOutlets.run(r.id);
    for (const o of outlets) this.st.insOutlet.run(r.id, o.outlet, o.mentions, o.independent);
  }

  private queue(messages: readonly OutboxMessage[]): void {
    for (const msg of messages) {
      this.st.insMessage.run(msg.id, msg.type, msg.body, msg.created);
      for (const sub of msg.subscribers) this.st.insDelivery.run(msg.id, sub, msg.created);
    }
  }

  async commitMerge(m: MergeCommit): Promise<void> {
    await this.write(`cannot merge ${m.from} into ${m.into.record.id}`, () => this.mergeTx(m));
  }

  private mergeInTx(m: MergeCommit): void {
    const db = this.db;
    const into = m.into.record.id;
    // A sentence linked to both events keeps one link, the better-scoring one.
    db.prepare(
      `DELETE FROM links WHERE event_id = @from AND EXISTS (SELECT 1 FROM links l2 WHERE l2.event_id = @into
      AND l2.article_id = links.article_id AND l2.sentence_idx = links.sentence_idx AND l2.score >= links.score)`,
    ).run({ from: m.from, into });
    db.prepare(
      `DELETE FROM links WHERE event_id = @into AND EXISTS (SELECT 1 FROM links l2 WHERE l2.event_id = @from
      AND l2.article_id = links.article_id AND l2.sentence_idx = links.sentence_idx)`,
    ).run({ from: m.from, into });
    db.prepare('UPDATE links SET event_id = ? WHERE event_id = ?').run(into, m.from);
    db.prepare('DELETE FROM events WHERE id = ?').run(m.from);
    this.st.delOutlets.run(m.from);
    this.upsertEvent(m.into);
    db.prepare('UPDATE merges SET into_id = ? WHERE into_id = ?').run(into, m.from);
    db.prepare('INSERT OR REPLACE INTO merges (from_id, into_id, score, at) VALUES (?, ?, ?, ?)').run(m.from, into, m.score, m.at);
    this.queue(m.messages);
  }

  async putEventStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    if (states.length === 0) return;
    const put = this.db.prepare('UPDATE events SET state = ? WHERE id = ?');
    await this.write(
      `cannot store the state of ${states.length} event(s)`,
      this.db.transaction(() => {
        for (const s of states) put.run(Buffer.from(s.state.buffer, s.state.byteOffset, s.state.byteLength), s.id);
      }),
    );
  }

  async commitSplit(sp: SplitCommit): Promise<void> {
    await this.write(`cannot split ${sp.into.record.id} off ${sp.from.record.id}`, () => this.splitTx(sp));
  }

  private splitInTx(sp: SplitCommit): void {
    const from = sp.from.record.id;
    const into = sp.into.record.id;
    for (const m of sp.moved) this.st.moveLink.run({ into, from, article: m.articleId, idx: m.sentenceIndex });
    this.upsertEvent(sp.from);
    this.upsertEvent(sp.into);
    // A label drawn from a sentence that moved goes with it: the event left behind takes its
    // earliest remaining sentence.
    const label = this.st.eventLabel.get(from) as string | undefined;
    const movedTexts = new Set(
      sp.moved
        .map((m) => this.st.sentenceText.get(m.articleId, m.sentenceIndex) as string | null | undefined)
        .filter((t): t is string => typeof t === 'string'),
    );
    if (label !== undefined && drawnFrom(label, movedTexts))
      this.st.setLabel.run((this.st.earliestText.get(from) as string | undefined) ?? ERASED_LABEL, from);
    this.st.insSplit.run(into, from, sp.moved.length, sp.score, sp.at);
    this.queue(sp.messages);
  }

  async linkedMentions(eventId: string): Promise<LinkedMention[]> {
    return (this.st.linkedMentions.all(eventId) as Row[]).map((r) => ({
      mention: mentionOf(r),
      rank: r.rank as number,
      score: r.score as number,
    }));
  }

  async linkedToBoth(a: string, b: string): Promise<SharedMention[]> {
    return (this.st.linkedToBoth.all({ a, b }) as Row[]).map((r) => ({
      mention: mentionOf(r),
      links: [
        { rank: r.rank as number, score: r.score as number },
        { rank: r.rank_b as number, score: r.score_b as number },
      ],
    }));
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

  async eventLabels(ids: readonly string[]): Promise<Map<string, string>> {
    const out = new Map<string, string>();
    for (const id of ids) {
      const label = this.st.eventLabel.get(id) as string | undefined;
      if (label !== undefined) out.set(id, label);
    }
    return out;
  }

  async recentEventIds(articles: number): Promise<string[]> {
    return this.db
      .prepare(
        `SELECT DISTINCT l.event_id FROM links l WHERE l.article_id IN (SELECT id FROM articles ORDER BY seq DESC LIMIT ?)
      ORDER BY l.event_id`,
      )
      .pluck()
      .all(articles) as string[];
  }

  async mergedInto(id: string): Promise<string | null> {
    return (this.db.prepare('SELECT into_id FROM merges WHERE from_id = ?').pluck().get(id) as string | undefined) ?? null;
  }

  async mergesInto(id: string): Promise<MergeRecord[]> {
    return (this.db.prepare('SELECT from_id, into_id, score, at FROM merges WHERE into_id = ? ORDER BY at, from_id').all(id) as Row[]).map(
      (r) => ({ from: r.from_id as string, into: r.into_id as string, score: r.score as number, at: r.at as string }),
    );
  }

  async loadLinkerState(): Promise<LinkerSnapshot> {
    const idf = this.readIdf();
    const bytes = (b: Buffer): Uint8Array => new Uint8Array(b.buffer, b.byteOffset, b.byteLength);
    return {
      events: (this.st.eventStates.all() as Buffer[]).map(bytes),
      idf: { docs: idf.docs, df: [...idf.df] },
      tally: (this.st.tally.get() as LinkTally | undefined) ?? { mentions: 0, high: 0 },
      stories: (this.st.storyStates.all() as Buffer[]).map(bytes),
      storyMerges: this.db.prepare('SELECT from_id, into_id FROM story_merges ORDER BY at, from_id').raw().all() as [string, string][],
    };
  }

  async commitStoryMerge(m: StoryMergeCommit): Promise<void> {
    const into = m.into.record.id;
    await this.write(
      `cannot merge story ${m.from} into ${into}`,
      this.db.transaction(() => {
        this.db.prepare('UPDATE articles SET story_id = ? WHERE story_id = ?').run(into, m.from);
        this.db.prepare('UPDATE events SET story_id = ? WHERE story_id = ?').run(into, m.from);
        this.db.prepare('DELETE FROM stories WHERE id = ?').run(m.from);
        this.upsertStory(m.into);
        // Earlier merges into the absorbed story now point at the survivor: one step to follow.
        this.db.prepare('UPDATE story_merges SET into_id = ? WHERE into_id = ?').run(into, m.from);
        this.db
          .prepare('INSERT OR REPLACE INTO story_merges (from_id, into_id, score, at) VALUES (?, ?, ?, ?)')
          .run(m.from, into, m.score, m.at);
        this.queue(m.messages);
      }),
    );
  }

  async recentStoryIds(articles: number): Promise<string[]> {
    return this.db
      .prepare(
        `SELECT story_id FROM (SELECT story_id, max(seq) AS last FROM (SELECT story_id, seq FROM articles ORDER BY seq DESC LIMIT ?)
      WHERE story_id IS NOT NULL GROUP BY story_id) ORDER BY last DESC`,
      )
      .pluck()
      .all(articles) as string[];
  }

  async storyMergedInto(id: string): Promise<string | null> {
    return (this.st.storyMergedInto.get(id) as string | undefined) ?? null;
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
    (q.text ?? '')
      .split(/\s+/)
      .filter(Boolean)
      .slice(0, 8)
      .forEach((word, i) => {
        where.push(
          `(s.label LIKE @w${i} ESCAPE '\\' OR s.names LIKE @w${i} ESCAPE '\\' OR EXISTS (SELECT 1 FROM articles a WHERE a.story_id = s.id AND a.title LIKE @w${i} ESCAPE '\\'))`,
        );
        params[`w${i}`] = `%${word.replace(/[\\%_]/g, (ch) => `\\${ch}`)}%`;
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
    return { story: toStorySummary(row), events, articles, merges };
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
    if (q.story) {
      where.push('e.story_id = coalesce((SELECT into_id FROM story_merges WHERE from_id = @story), @story)');
      params.story = q.story;
    }
    (q.text ?? '')
      .split(/\s+/)
      .filter(Boolean)
      .slice(0, 8)
      .forEach((word, i) => {
        where.push(`(e.label LIKE @w${i} ESCAPE '\\' OR EXISTS (SELECT 1 FROM links l JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = e.id AND s.text LIKE @w${i} ESCAPE '\\'))`);
        params[`w${i}`] = `%${word.replace(/[\\%_]/g, (ch) => `\\${ch}`)}%`;
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

  async dueDeliveries(now: string, limit: number, skip: readonly string[] = []): Promise<Delivery[]> {
    return (this.st.due.all(now, JSON.stringify(skip), limit) as Row[]).map(toDelivery);
  }

  async recordAttempt(
    messageId: string,
    subscriber: string,
    o: { status: Delivery['status']; attempts: number; nextAt: string; error: string | null },
  ): Promise<void> {
    await this.write(`cannot record a delivery to ${subscriber}`, () =>
      this.st.attempt.run(o.status, o.attempts, o.nextAt, o.error, messageId, subscriber),
    );
  }

  async deadLetters(limit: number): Promise<Delivery[]> {
    return (this.st.dead.all(limit) as Row[]).map(toDelivery);
  }

  async claimVectorSpace(space: string): Promise<string> {
    this.db.prepare(`INSERT OR IGNORE INTO meta (key, value) VALUES ('vector_space', ?)`).run(space);
    return this.db.prepare(`SELECT value FROM meta WHERE key = 'vector_space'`).pluck().get() as string;
  }

  async pruneNotifications(before: string): Promise<number> {
    return this.write(
      'cannot prune notifications',
      this.db.transaction(() => {
        // deliveries_due (status, next_at) finds them; a settled delivery's next_at is when it settled.
        this.db.prepare("DELETE FROM deliveries WHERE status IN ('delivered', 'dead') AND next_at < ?").run(before);
        return this.db
          .prepare('DELETE FROM outbox WHERE created < ? AND NOT EXISTS (SELECT 1 FROM deliveries d WHERE d.message_id = outbox.id)')
          .run(before).changes;
      }),
    );
  }

  async recentSketches(days: number): Promise<{ id: string; time: number; sketch: Uint32Array }[]> {
    const newest = this.db.prepare('SELECT max(coalesce(published, fetched)) FROM articles').pluck().get() as string | null;
    if (!newest) return [];
    const since = new Date(Date.parse(newest) - days * 86_400_000).toISOString();
    const rows = this.db
      .prepare(
        `SELECT id, coalesce(published, fetched) AS at, sketch FROM articles
      WHERE coalesce(published, fetched) >= ? AND sketch IS NOT NULL ORDER BY at, seq`,
      )
      .all(since) as Row[];
    return rows.map((r) => ({ id: r.id as string, time: Date.parse(r.at as string), sketch: decodeWords(r.sketch as Buffer) }));
  }

  async listFeeds(): Promise<FeedEntry[]> {
    return (this.db.prepare('SELECT data FROM feeds ORDER BY seq').pluck().all() as string[]).map((d) => JSON.parse(d) as FeedEntry);
  }

  async putFeed(f: FeedEntry): Promise<void> {
    await this.write(`cannot store feed ${f.id}`, () =>
      this.db
        .prepare('INSERT INTO feeds (id, data) VALUES (?, ?) ON CONFLICT (id) DO UPDATE SET data = excluded.data')
        .run(f.id, JSON.stringify(f)),
    );
  }

  async updateFeed(id: string, change: (f: FeedEntry) => FeedEntry): Promise<FeedEntry | null> {
    return this.write(
      `cannot update feed ${id}`,
      this.db.transaction((): FeedEntry | null => {
        const data = this.db.prepare('SELECT data FROM feeds WHERE id = ?').pluck().get(id) as string | undefined;
        if (data === undefined) return null;
        const next = change(JSON.parse(data) as FeedEntry);
        this.db.prepare('UPDATE feeds SET data = ? WHERE id = ?').run(JSON.stringify(next), id);
        return next;
      }),
    );
  }

  async deleteFeed(id: string): Promise<boolean> {
    return this.db.prepare('DELETE FROM feeds WHERE id = ?').run(id).changes > 0;
  }

  async eraseTextBefore(day: string): Promise<number> {
    const ids = this.db
      .prepare('SELECT id FROM articles WHERE coalesce(published, fetched) < ? AND text IS NOT NULL')
      .pluck()
      .all(day) as string[];
    if (ids.length > 0) await this.write('cannot erase text', () => this.eraseSecurely(ids));
    return ids.length;
  }

  async eraseArticleText(id: string): Promise<boolean> {
    if (this.st.hasArticle.get(id) === undefined) return false;
    await this.write(`cannot erase the text of ${id}`, () => this.eraseSecurely([id]));
    return true;
  }

  /**
   * Erases the articles' text in one transaction with full secure_delete, which zeroes the
   * cells and overflow pages it frees (on for the erasure only: it costs writes). Copies of
   * the text that page splits left in unused page space earlier stay until compact().
   */
  private eraseSecurely(ids: readonly string[]): void {
    this.db.pragma('secure_delete = ON');
    try {
      this.db.transaction(() => {
        const erasedTexts = new Set<string>();
        for (const id of ids) this.eraseInTx(id, erasedTexts);
        this.scrubOutbox(new Set(ids), erasedTexts);
      })();
    } finally {
      this.db.pragma('secure_delete = FAST');
    }
  }

  /** Erases one article's text; adds the sentences erased to `erasedTexts`. */
  private eraseInTx(id: string, erasedTexts: Set<string>): void {
    const db = this.db;
    // Labels are drawn from sentences: an event labelled by an erased sentence takes the
    // text of its earliest remaining mention, or a placeholder.
    const erased = db.prepare('SELECT text FROM sentences WHERE article_id = ? AND text IS NOT NULL').pluck().all(id) as string[];
    for (const t of erased) erasedTexts.add(t);
    db.prepare('UPDATE articles SET text = NULL WHERE id = ?').run(id);
    db.prepare('UPDATE sentences SET text = NULL WHERE article_id = ?').run(id);
    // A TF-IDF vector is a bag of the sentence's (hashed) words, a sketch one of its
    // phrases: they go with the text.
    db.prepare('UPDATE mentions SET vector = NULL WHERE article_id = ?').run(id);
    db.prepare('UPDATE articles SET sketch = NULL WHERE id = ?').run(id);
    const events = db
      .prepare('SELECT DISTINCT e.id, e.label, e.state FROM links l JOIN events e ON e.id = l.event_id WHERE l.article_id = ?')
      .all(id) as Row[];
    const erasedSet = new Set(erased);
    for (const e of events) {
      // Linker states written before labels left them carry a label in their header.
      const state = deserialiseEvent(e.state as Buffer);
      if (state.label !== '') db.prepare('UPDATE events SET state = ? WHERE id = ?').run(serialiseEvent({ ...state, label: '' }), e.id);
      const label = e.label as string;
      if (!drawnFrom(label, erasedSet)) continue;
      this.st.setLabel.run((this.st.earliestText.get(e.id) as string | undefined) ?? ERASED_LABEL, e.id);
    }
  }

  /**
   * Notifications keep copies of sentences and labels: in one pass over the outbox, the
   * erased articles' sentence text goes (null) and a label drawn from an erased sentence
   * takes the event's label as it now stands, in messages still to deliver and in those
   * delivered alike.
   */
  private scrubOutbox(articles: ReadonlySet<string>, erasedTexts: ReadonlySet<string>): void {
    const changes: [string, string][] = [];
    // An event since merged away takes the label of the event it went into.
    const mergedInto = this.db.prepare('SELECT into_id FROM merges WHERE from_id = ?').pluck();
    const storedLabel = (eventId: string | undefined): string => {
      if (eventId === undefined) return ERASED_LABEL;
      const into = (mergedInto.get(eventId) as string | undefined) ?? eventId;
      return (this.st.eventLabel.get(into) as string | undefined) ?? ERASED_LABEL;
    };
    for (const row of this.db.prepare('SELECT id, body FROM outbox').iterate() as Iterable<{ id: string; body: string }>) {
      const body = JSON.parse(row.body) as {
        data?: Record<string, { id?: string; article?: string; text?: string | null; label?: string } | undefined>;
      };
      let changed = false;
      for (const part of Object.values(body.data ?? {})) {
        if (!part || typeof part !== 'object') continue;
        if (part.article !== undefined && articles.has(part.article) && part.text != null) {
          part.text = null;
          changed = true;
        }
        if (typeof part.label !== 'string') continue;
        if (drawnFrom(part.label, erasedTexts)) {
          part.label = storedLabel(part.id);
          changed = true;
        }
      }
      if (changed) changes.push([JSON.stringify(body), row.id]);
    }
    // Written after the read: a connection cannot write while it iterates.
    const update = this.db.prepare('UPDATE outbox SET body = ? WHERE id = ?');
    for (const [body, id] of changes) update.run(body, id);
  }

  /** VACUUM rebuilds every page; the TRUNCATE checkpoint then empties the log of the old ones. */
  async compact(): Promise<void> {
    try {
      this.db.exec('VACUUM');
      this.db.pragma('wal_checkpoint(TRUNCATE)');
    } catch (err) {
      throw new StrandError('STRAND_STORE_FAILED', `cannot compact the SQLite store: ${(err as Error).message}`, { cause: err });
    }
  }

  unavailable(): boolean {
    return false;
  }

  async close(): Promise<void> {
    await this.checkpointer?.stop();
    if (this.db.open) this.db.close();
  }
}

/** A linked mention as stored, from a row of the mentions joined with its sentence. */
function mentionOf(r: Row): LinkedMention['mention'] {
  return {
    articleId: r.article_id as string,
    sentenceIndex: r.sentence_idx as number,
    text: (r.text as string | null) ?? '',
    outlet: r.outlet as string,
    published: r.published as string,
    eventness: r.eventness as number,
    participants: JSON.parse(r.participants as string) as string[],
    places: JSON.parse(r.places as string) as string[],
    times: JSON.parse(r.times as string) as TimeExpression[],
    terms: [],
    isCopy: r.is_copy === 1,
    vector: r.vector ? decodeVector(r.vector as Buffer) : null,
  };
}

/** Per-article document-frequency rows folded into the snapshot this often. */
const IDF_SNAPSHOT_EVERY = 2000;

/** (feature, count) pairs as little-endian uint32 pairs. */
function packIdf(df: ReadonlyMap<number, number>): Buffer {
  const b = Buffer.alloc(df.size * 8);
  let at = 0;
  for (const [f, n] of df) {
    b.writeUInt32LE(f, at);
    b.writeUInt32LE(n, at + 4);
    at += 8;
  }
  return b;
}

function* unpackIdf(b: Buffer): Generator<[number, number]> {
  for (let at = 0; at + 8 <= b.length; at += 8) yield [b.readUInt32LE(at), b.readUInt32LE(at + 4)];
}

const EVENT_SELECT = `SELECT e.id, e.label, e.first_seen, e.last_seen, e.time_start, e.time_end, e.participants, e.places, e.mention_count, e.version, e.story_id,
  (SELECT json_group_array(outlet) FROM (SELECT outlet FROM event_outlets eo WHERE eo.event_id = e.id ORDER BY outlet)) AS outlets,
  (SELECT count(*) FROM event_outlets eo WHERE eo.event_id = e.id) AS outlet_count,
  (SELECT count(*) FROM event_outlets eo WHERE eo.event_id = e.id AND eo.independent > 0) AS independent
  FROM events e`;

function toSummary(r: Row): EventSummary {
  return {
    id: r.id as string,
    label: r.label as string,
    firstSeen: r.first_seen as string,
    lastSeen: r.last_seen as string,
    timeStart: r.time_start as string,
    timeEnd: r.time_end as string,
    participants: JSON.parse(r.participants as string) as string[],
    places: JSON.parse(r.places as string) as string[],
    outlets: JSON.parse(r.outlets as string) as string[],
    mentionCount: r.mention_count as number,
    version: r.version as number,
    story: (r.story_id as string | null) ?? null,
    independentOutlets: r.independent as number,
  };
}

const STORY_SELECT = `SELECT s.id, s.label, s.first_seen, s.last_seen, s.article_count, s.names, s.version,
  (SELECT json_group_array(outlet) FROM (SELECT DISTINCT outlet FROM articles a WHERE a.story_id = s.id ORDER BY outlet)) AS outlets,
  (SELECT count(DISTINCT outlet) FROM articles a WHERE a.story_id = s.id) AS outlet_count,
  (SELECT count(DISTINCT outlet) FROM articles a WHERE a.story_id = s.id AND a.duplicate_of IS NULL) AS independent,
  (SELECT count(*) FROM events e WHERE e.story_id = s.id) AS event_count
  FROM stories s`;

function toStorySummary(r: Row): StorySummary {
  return {
    id: r.id as string,
    label: r.label as string,
    firstSeen: r.first_seen as string,
    lastSeen: r.last_seen as string,
    articleCount: r.article_count as number,
    outlets: JSON.parse(r.outlets as string) as string[],
    names: JSON.parse(r.names as string) as string[],
    version: r.version as number,
    independentOutlets: r.independent as number,
    eventCount: r.event_count as number,
  };
}

function toDelivery(r: Row): Delivery {
  return {
    messageId: r.message_id as string,
    subscriber: r.subscriber as string,
    type: r.type as string,
    body: r.body as string,
    created: r.created as string,
    attempts: r.attempts as number,
    nextAt: r.next_at as string,
    status: r.status as Delivery['status'],
    lastError: (r.last_error as string | null) ?? null,
  };
}
