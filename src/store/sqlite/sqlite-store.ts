/**
 * The embedded Store on SQLite (better-sqlite3): one file, nothing else to install.
 * Write-ahead logging, so a process killed at any point loses no committed transaction and
 * readers (the API) never block the writer (the pipeline). Every article's results are one
 * transaction: after a crash an article is either wholly stored or not at all. Over 350
 * lines because each commit's statements are prepared and run here, in one transaction;
 * the other concerns are parts of their own (event-queries.ts, outbox.ts, ...).
 */
import { mkdirSync } from 'node:fs';
import { dirname } from 'node:path';
import Database from 'better-sqlite3';
import { relabelAfter } from '../../link/labels.js';
import type { Logger } from '../../logger.js';
import { StrandError } from '../../errors.js';
import type {
  ArticleCommit,
  CommitResult,
  EventUpdate,
  LinkTally,
  LinkedMention,
  LinkerSnapshot,
  MergeCommit,
  SharedMention,
  SplitCommit,
  Store,
  StoryMember,
  StoryMergeCommit,
  StorySplitCommit,
  StoryUpdate,
} from '../store.js';
import { StoreParts } from '../store-parts.js';
import { decodeVector, decodeWords, encodeVector, encodeWords } from '../vector-codec.js';
import { MIGRATIONS } from './schema.js';
import { type WalCheckpointer, startWalCheckpointer } from './wal-checkpointer.js';
import { type Write, writeWhenFree } from './when-free.js';
import { SqliteEventQueries } from './event-queries.js';
import { SqliteOutbox } from './outbox.js';
import { SqliteFeedRegistry } from './feed-registry.js';
import { SqliteSubscriptions } from './subscriptions.js';
import { SqliteApiKeys } from './api-keys.js';
import { SqliteReviews } from './reviews.js';
import { SqliteCorrections } from './corrections.js';
import { SqliteRetention } from './retention.js';
import { type Row, labelStatements, mentionOf } from './rows.js';

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
      const step = MIGRATIONS[v]!;
      if (typeof step === 'string') db.exec(step);
      else step(db);
      db.pragma(`user_version = ${v + 1}`);
    })();
  }
}

/**
 * The SQLite implementation of Store. It writes the article log and the linking state
 * (their commits are one transaction each, outbox rows included) and hands the other
 * concerns to their own parts: the API's queries, the outbox's deliveries, the feed list
 * and retention.
 */
export class SqliteStore extends StoreParts implements Store {
  private readonly st;
  private readonly write: Write;
  protected readonly queries: SqliteEventQueries;
  protected readonly outbox: SqliteOutbox;
  protected readonly apiKeys: SqliteApiKeys;
  protected readonly reviews: SqliteReviews;
  protected readonly corrections: SqliteCorrections;
  protected readonly subscriptions: SqliteSubscriptions;
  protected readonly feeds: SqliteFeedRegistry;
  protected readonly retention: SqliteRetention;
  private readonly commitTx: (c: ArticleCommit) => CommitResult;
  private readonly commitManyTx: (cs: readonly ArticleCommit[]) => CommitResult[];
  private readonly mergeTx: (m: MergeCommit) => void;
  private readonly splitTx: (s: SplitCommit) => void;
  private readonly prepared = new Map<string, Database.Statement>();

  constructor(
    private readonly db: Database.Database,
    private readonly idfSnapshotEvery: number = IDF_SNAPSHOT_EVERY,
    private readonly checkpointer?: WalCheckpointer,
    log?: Pick<Logger, 'warn'>,
  ) {
    super();
    this.write = writeWhenFree(log);
    this.queries = new SqliteEventQueries(db);
    this.outbox = new SqliteOutbox(db, this.write);
    this.subscriptions = new SqliteSubscriptions(db, this.write);
    this.apiKeys = new SqliteApiKeys(db, this.write);
    this.reviews = new SqliteReviews(db, this.write);
    this.corrections = new SqliteCorrections(
      db,
      this.write,
      this.outbox,
      (u) => this.upsertEvent(u),
      (u) => this.upsertStory(u),
    );
    this.feeds = new SqliteFeedRegistry(db, this.write);
    this.retention = new SqliteRetention(db, this.write);
    this.st = {
      hasArticle: db.prepare('SELECT 1 FROM articles WHERE id = ?').pluck(),
      oweConsolidation: db.prepare(
        `INSERT OR REPLACE INTO meta (key, value) VALUES ('consolidation_owed', (SELECT count(*) FROM articles))`,
      ),
      ...labelStatements(db),
      sentenceText: db.prepare('SELECT text FROM sentences WHERE article_id = ? AND idx = ?').pluck(),
      byUrl: db.prepare('SELECT id FROM articles WHERE canonical_url = ? ORDER BY seq LIMIT 1').pluck(),
      byHash: db.prepare('SELECT id FROM articles WHERE content_hash = ? ORDER BY seq LIMIT 1').pluck(),
      insArticle:
        db.prepare(`INSERT INTO articles (id, outlet, url, title, published, fetched, language, text, content_hash, duplicate_of, source, copy_similarity, sketch, canonical_url,
          story_vector, story_names, story_id)
        VALUES (@id, @outlet, @url, @title, @published, @fetched, @language, @text, @contentHash, @duplicateOf, @source, @copySimilarity, @sketch, @canonicalUrl,
          @storyVector, @storyNames, coalesce((SELECT into_id FROM story_merges WHERE from_id = @storyId), @storyId))`),
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
      eventStates: db.prepare('SELECT state FROM events').pluck(),
      idfRows: db.prepare('SELECT feature, df FROM idf').raw(),
      docs: db.prepare(`SELECT value FROM meta WHERE key = 'idf_docs'`).pluck(),
      // A back-reference says so in its evidence, which JSON.stringify writes as `"refersBack":true`
      // (the quote before the colon cannot occur unescaped inside a string): finding that text
      // is cheaper than parsing the JSON of every link a split examination reads.
      linkedMentions: db.prepare(`
        SELECT l.article_id, l.sentence_idx, l.score, l.rank, instr(l.evidence, '"refersBack":true') AS refers_back, m.outlet, m.published, m.eventness, m.participants, m.places, m.times, m.is_copy, m.vector, s.text
        FROM links l
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        LEFT JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = ? ORDER BY m.published, l.article_id, l.sentence_idx`),
      linkedToBoth: db.prepare(`
        SELECT l.article_id, l.sentence_idx, l.score, l.rank, instr(l.evidence, '"refersBack":true') AS refers_back,
          k.score AS score_b, k.rank AS rank_b, instr(k.evidence, '"refersBack":true') AS refers_back_b,
          m.outlet, m.published, m.eventness, m.participants, m.places, m.times, m.is_copy, m.vector, s.text
        FROM links l
        JOIN links k ON k.article_id = l.article_id AND k.sentence_idx = l.sentence_idx AND k.event_id = @b
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        LEFT JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        WHERE l.event_id = @a ORDER BY m.published, l.article_id, l.sentence_idx`),
      moveLink: db.prepare('UPDATE links SET event_id = @into WHERE article_id = @article AND sentence_idx = @idx AND event_id = @from'),
      insSplit: db.prepare('INSERT OR REPLACE INTO splits (into_id, from_id, mentions, score, at) VALUES (?, ?, ?, ?, ?)'),
    };
    this.commitTx = db.transaction((c: ArticleCommit): CommitResult => this.commitInTx(c));
    this.commitManyTx = db.transaction((cs: readonly ArticleCommit[]): CommitResult[] => cs.map((c) => this.commitInTx(c)));
    this.mergeTx = db.transaction((m: MergeCommit): void => this.mergeInTx(m));
    this.splitTx = db.transaction((sp: SplitCommit): void => this.splitInTx(sp));
  }

  /** A statement for `text`, compiled once (consolidation's statements run at every pass). */
  private sql(text: string): Database.Statement {
    let st = this.prepared.get(text);
    if (!st) {
      st = this.db.prepare(text);
      this.prepared.set(text, st);
    }
    return st;
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

  private commitInTx(c: ArticleCommit): CommitResult {
    const st = this.st;
    if (st.hasArticle.get(c.article.id) !== undefined) return 'already-stored';
    st.insArticle.run({
      ...c.article,
      copySimilarity: c.article.duplicateOf ? (c.article.copySimilarity ?? 1) : null,
      sketch: c.sketch ? encodeWords(c.sketch) : null,
      canonicalUrl: c.canonicalUrl,
      storyVector: c.storyInput ? encodeVector(c.storyInput.vector) : null,
      storyNames: c.storyInput ? JSON.stringify(c.storyInput.names) : null,
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
    if (c.consolidationDue) st.oweConsolidation.run();
    this.outbox.queue(c.messages);
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

  async commitMerge(m: MergeCommit): Promise<void> {
    await this.write(`cannot merge ${m.from} into ${m.into.record.id}`, () => this.mergeTx(m));
  }

  private mergeInTx(m: MergeCommit): void {
    const into = m.into.record.id;
    // A sentence linked to both events keeps one link, the better-scoring one.
    this.sql(
      `DELETE FROM links WHERE event_id = @from AND EXISTS (SELECT 1 FROM links l2 WHERE l2.event_id = @into
      AND l2.article_id = links.article_id AND l2.sentence_idx = links.sentence_idx AND l2.score >= links.score)`,
    ).run({ from: m.from, into });
    this.sql(
      `DELETE FROM links WHERE event_id = @into AND EXISTS (SELECT 1 FROM links l2 WHERE l2.event_id = @from
      AND l2.article_id = links.article_id AND l2.sentence_idx = links.sentence_idx)`,
    ).run({ from: m.from, into });
    this.sql('UPDATE links SET event_id = ? WHERE event_id = ?').run(into, m.from);
    this.sql('DELETE FROM events WHERE id = ?').run(m.from);
    this.st.delOutlets.run(m.from);
    this.upsertEvent(m.into);
    this.sql('UPDATE merges SET into_id = ? WHERE into_id = ?').run(into, m.from);
    this.sql('INSERT OR REPLACE INTO merges (from_id, into_id, score, at) VALUES (?, ?, ?, ?)').run(m.from, into, m.score, m.at);
    this.outbox.queue(m.messages);
  }

  async putEventStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    await this.putStates('events', states);
  }

  async putStoryStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    await this.putStates('stories', states);
  }

  private async putStates(table: 'events' | 'stories', states: readonly { id: string; state: Uint8Array }[]): Promise<void> {
    if (states.length === 0) return;
    const put = this.sql(`UPDATE ${table} SET state = ? WHERE id = ?`);
    await this.write(
      `cannot store the state of ${states.length} row(s) of ${table}`,
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
    const relabel =
      label === undefined ? null : relabelAfter(label, movedTexts, () => this.st.earliestText.get(from) as string | undefined);
    if (relabel !== null) this.st.setLabel.run(relabel, from);
    this.st.insSplit.run(into, from, sp.moved.length, sp.score, sp.at);
    this.outbox.queue(sp.messages);
  }

  async linkedMentions(eventId: string): Promise<LinkedMention[]> {
    return (this.st.linkedMentions.all(eventId) as Row[]).map((r) => ({
      mention: mentionOf(r),
      rank: r.rank as number,
      score: r.score as number,
      ...(r.refers_back ? { refersBack: true } : {}),
    }));
  }

  async linkedToBoth(a: string, b: string): Promise<SharedMention[]> {
    return (this.st.linkedToBoth.all({ a, b }) as Row[]).map((r) => ({
      mention: mentionOf(r),
      links: [
        { rank: r.rank as number, score: r.score as number, ...(r.refers_back ? { refersBack: true } : {}) },
        { rank: r.rank_b as number, score: r.score_b as number, ...(r.refers_back_b ? { refersBack: true } : {}) },
      ],
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
    return this.sql(
      `SELECT DISTINCT l.event_id FROM links l WHERE l.article_id IN (SELECT id FROM articles ORDER BY seq DESC LIMIT ?)
      ORDER BY l.event_id`,
    )
      .pluck()
      .all(articles) as string[];
  }

  async loadLinkerState(): Promise<LinkerSnapshot> {
    const idf = this.readIdf();
    const bytes = (b: Buffer): Uint8Array => new Uint8Array(b.buffer, b.byteOffset, b.byteLength);
    return {
      events: (this.st.eventStates.all() as Buffer[]).map(bytes),
      idf: { docs: idf.docs, df: [...idf.df] },
      tally: (this.st.tally.get() as LinkTally | undefined) ?? { mentions: 0, high: 0 },
      stories: (this.st.storyStates.all() as Buffer[]).map(bytes),
      storyMerges: this.sql('SELECT from_id, into_id FROM story_merges ORDER BY at, from_id').raw().all() as [string, string][],
    };
  }

  async commitStoryMerge(m: StoryMergeCommit): Promise<void> {
    const into = m.into.record.id;
    await this.write(
      `cannot merge story ${m.from} into ${into}`,
      this.db.transaction(() => {
        this.sql('UPDATE articles SET story_id = ? WHERE story_id = ?').run(into, m.from);
        this.sql('UPDATE events SET story_id = ? WHERE story_id = ?').run(into, m.from);
        this.sql('DELETE FROM stories WHERE id = ?').run(m.from);
        this.upsertStory(m.into);
        // Earlier merges into the absorbed story now point at the survivor: one step to follow.
        this.sql('UPDATE story_merges SET into_id = ? WHERE into_id = ?').run(into, m.from);
        this.sql('INSERT OR REPLACE INTO story_merges (from_id, into_id, score, at) VALUES (?, ?, ?, ?)').run(m.from, into, m.score, m.at);
        if (m.correction) this.corrections.record(m.correction);
        this.outbox.queue(m.messages);
      }),
    );
  }

  async commitStorySplit(sp: StorySplitCommit): Promise<void> {
    const from = sp.from.record.id;
    const into = sp.into.record.id;
    await this.write(
      `cannot split story ${into} off ${from}`,
      this.db.transaction(() => {
        const moveArticle = this.sql('UPDATE articles SET story_id = ? WHERE id = ? AND story_id = ?');
        for (const id of sp.moved) moveArticle.run(into, id, from);
        this.upsertStory(sp.from);
        this.upsertStory(sp.into);
        const moveEvent = this.sql('UPDATE events SET story_id = ? WHERE id = ?');
        for (const e of sp.events) {
          this.upsertEvent(e);
          moveEvent.run(into, e.record.id);
        }
        this.sql('INSERT OR REPLACE INTO story_splits (into_id, from_id, articles, score, at) VALUES (?, ?, ?, ?, ?)').run(
          into,
          from,
          sp.moved.length,
          sp.score,
          sp.at,
        );
        if (sp.correction) this.corrections.record(sp.correction);
        this.outbox.queue(sp.messages);
      }),
    );
  }

  async storyMembers(storyId: string): Promise<StoryMember[]> {
    const rows = this.sql(
      `SELECT id, title, outlet, coalesce(published, fetched) AS at, duplicate_of, story_names, story_vector FROM articles
        WHERE story_id = ? ORDER BY at, id`,
    ).all(storyId) as Row[];
    return rows.map((r) => ({
      articleId: r.id as string,
      title: r.title as string,
      outlet: r.outlet as string,
      published: r.at as string,
      isCopy: r.duplicate_of !== null,
      names: r.story_names ? (JSON.parse(r.story_names as string) as string[]) : [],
      vector: r.story_vector ? decodeVector(r.story_vector as Buffer) : null,
    }));
  }

  async recentStoryIds(articles: number): Promise<string[]> {
    return this.sql(
      `SELECT story_id FROM (SELECT story_id, max(seq) AS last FROM (SELECT story_id, seq FROM articles ORDER BY seq DESC LIMIT ?)
      WHERE story_id IS NOT NULL GROUP BY story_id) ORDER BY last DESC`,
    )
      .pluck()
      .all(articles) as string[];
  }

  async consolidationOwed(): Promise<number | null> {
    const v = this.sql(`SELECT value FROM meta WHERE key = 'consolidation_owed'`).pluck().get() as string | undefined;
    return v === undefined ? null : Number(v);
  }

  async settleConsolidation(articles: number): Promise<void> {
    await this.write('cannot settle the consolidation pass', () =>
      this.sql(`DELETE FROM meta WHERE key = 'consolidation_owed' AND CAST(value AS INTEGER) <= ?`).run(articles),
    );
  }

  async claimVectorSpace(space: string): Promise<string> {
    this.sql(`INSERT OR IGNORE INTO meta (key, value) VALUES ('vector_space', ?)`).run(space);
    return this.sql(`SELECT value FROM meta WHERE key = 'vector_space'`).pluck().get() as string;
  }

  async recentSketches(days: number): Promise<{ id: string; time: number; sketch: Uint32Array }[]> {
    const newest = this.sql('SELECT max(coalesce(published, fetched)) FROM articles').pluck().get() as string | null;
    if (!newest) return [];
    const since = new Date(Date.parse(newest) - days * 86_400_000).toISOString();
    const rows = this.sql(
      `SELECT id, coalesce(published, fetched) AS at, sketch FROM articles
      WHERE coalesce(published, fetched) >= ? AND sketch IS NOT NULL ORDER BY at, seq`,
    ).all(since) as Row[];
    return rows.map((r) => ({ id: r.id as string, time: Date.parse(r.at as string), sketch: decodeWords(r.sketch as Buffer) }));
  }

  unavailable(): boolean {
    return false;
  }

  async close(): Promise<void> {
    await this.checkpointer?.stop();
    if (this.db.open) this.db.close();
  }
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
