/**
 * The SQLite schema. Versioned by `PRAGMA user_version`; each entry of MIGRATIONS moves
 * the file one version up, inside a transaction: SQL, or a function for data that SQL
 * cannot reach (the linker's binary states).
 */
import type Database from 'better-sqlite3';
import { deserialiseEvent, serialiseEvent } from '../../link/event-state.js';

/** One step of the schema: SQL to run, or a function given the open database. */
export type Migration = string | ((db: Database.Database) => void);

/**
 * Linker states written before labels left them carry the label, a copy of a sentence, in
 * their header; the label lives with the event record alone, so erasing the sentence's
 * text can relabel it. The states are rewritten without it.
 */
function dropStateLabels(db: Database.Database): void {
  const rewrite = db.prepare('UPDATE events SET state = ? WHERE id = ?');
  const rows = db.prepare('SELECT id, state FROM events').all() as { id: string; state: Buffer }[];
  for (const { id, state } of rows) {
    const e = deserialiseEvent(state);
    if (e.label !== '') rewrite.run(serialiseEvent({ ...e, label: '' }), id);
  }
}

export const MIGRATIONS: readonly Migration[] = [
  `
  CREATE TABLE articles (
    seq          INTEGER PRIMARY KEY,
    id           TEXT NOT NULL UNIQUE,
    outlet       TEXT NOT NULL,
    url          TEXT,
    title        TEXT NOT NULL,
    published    TEXT,
    fetched      TEXT NOT NULL,
    language     TEXT,
    text         TEXT,
    content_hash TEXT NOT NULL,
    duplicate_of TEXT,
    source       TEXT NOT NULL
  );
  CREATE INDEX articles_hash ON articles(content_hash, seq);
  CREATE INDEX articles_published ON articles(published);

  CREATE TABLE sentences (
    article_id TEXT NOT NULL,
    idx        INTEGER NOT NULL,
    text       TEXT,
    start      INTEGER NOT NULL,
    end        INTEGER NOT NULL,
    eventness  REAL NOT NULL,
    PRIMARY KEY (article_id, idx)
  ) WITHOUT ROWID;

  CREATE TABLE mentions (
    article_id   TEXT NOT NULL,
    sentence_idx INTEGER NOT NULL,
    outlet       TEXT NOT NULL,
    published    TEXT NOT NULL,
    eventness    REAL NOT NULL,
    participants TEXT NOT NULL,
    places       TEXT NOT NULL,
    times        TEXT NOT NULL,
    is_copy      INTEGER NOT NULL,
    PRIMARY KEY (article_id, sentence_idx)
  ) WITHOUT ROWID;

  CREATE TABLE links (
    article_id   TEXT NOT NULL,
    sentence_idx INTEGER NOT NULL,
    event_id     TEXT NOT NULL,
    score        REAL NOT NULL,
    rank         INTEGER NOT NULL,
    evidence     TEXT NOT NULL,
    PRIMARY KEY (article_id, sentence_idx, event_id)
  ) WITHOUT ROWID;
  CREATE INDEX links_event ON links(event_id);

  CREATE TABLE events (
    id            TEXT PRIMARY KEY,
    label         TEXT NOT NULL,
    first_seen    TEXT NOT NULL,
    last_seen     TEXT NOT NULL,
    time_start    TEXT NOT NULL,
    time_end      TEXT NOT NULL,
    participants  TEXT NOT NULL,
    places        TEXT NOT NULL,
    mention_count INTEGER NOT NULL,
    version       INTEGER NOT NULL,
    state         BLOB NOT NULL
  ) WITHOUT ROWID;
  CREATE INDEX events_last_seen ON events(last_seen);

  CREATE TABLE event_outlets (
    event_id    TEXT NOT NULL,
    outlet      TEXT NOT NULL,
    mentions    INTEGER NOT NULL,
    independent INTEGER NOT NULL,
    PRIMARY KEY (event_id, outlet)
  ) WITHOUT ROWID;
  CREATE INDEX event_outlets_outlet ON event_outlets(outlet);

  CREATE TABLE idf (feature INTEGER PRIMARY KEY, df INTEGER NOT NULL);
  CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL) WITHOUT ROWID;

  CREATE TABLE outbox (
    id      TEXT PRIMARY KEY,
    type    TEXT NOT NULL,
    body    TEXT NOT NULL,
    created TEXT NOT NULL
  ) WITHOUT ROWID;
  CREATE TABLE deliveries (
    message_id TEXT NOT NULL,
    subscriber TEXT NOT NULL,
    status     TEXT NOT NULL,
    attempts   INTEGER NOT NULL,
    next_at    TEXT NOT NULL,
    last_error TEXT,
    PRIMARY KEY (message_id, subscriber)
  ) WITHOUT ROWID;
  CREATE INDEX deliveries_due ON deliveries(status, next_at);
  `,
  `
  CREATE TABLE merges (
    from_id TEXT PRIMARY KEY,
    into_id TEXT NOT NULL,
    score   REAL NOT NULL,
    at      TEXT NOT NULL
  ) WITHOUT ROWID;
  CREATE INDEX merges_into ON merges(into_id);
  `,
  // Document frequencies as one packed row per article plus a periodic snapshot: one
  // insert per article instead of an upsert per feature (the upserts were most of the
  // statements a commit ran). The per-feature table of version 1 is still read.
  `
  CREATE TABLE idf_log (seq INTEGER PRIMARY KEY, docs INTEGER NOT NULL, data BLOB NOT NULL);
  CREATE TABLE idf_snapshot (id INTEGER PRIMARY KEY CHECK (id = 1), docs INTEGER NOT NULL, data BLOB NOT NULL);
  `,
  // Each mention's vector, so consolidation can split an event by its mentions as they
  // were linked; and the record of splits.
  `
  ALTER TABLE mentions ADD COLUMN vector BLOB;
  CREATE TABLE splits (
    into_id  TEXT PRIMARY KEY,
    from_id  TEXT NOT NULL,
    mentions INTEGER NOT NULL,
    score    REAL NOT NULL,
    at       TEXT NOT NULL
  ) WITHOUT ROWID;
  CREATE INDEX splits_from ON splits(from_id);
  `,
  // Polled feeds: the operator's list and each feed's polling state, one JSON document each.
  `
  CREATE TABLE feeds (
    seq  INTEGER PRIMARY KEY,
    id   TEXT NOT NULL UNIQUE,
    data TEXT NOT NULL
  );
  `,
  // Copy detection: each article's MinHash sketch and, for a copy, how alike it is.
  `
  ALTER TABLE articles ADD COLUMN sketch BLOB;
  ALTER TABLE articles ADD COLUMN copy_similarity REAL;
  `,
  // The same article reached through another link is found by its canonical URL.
  `
  ALTER TABLE articles ADD COLUMN canonical_url TEXT;
  CREATE INDEX articles_canonical_url ON articles(canonical_url);
  `,
  // Stories: the threads articles join; an article and an event each belong to one.
  `
  CREATE TABLE stories (
    id            TEXT PRIMARY KEY,
    label         TEXT NOT NULL,
    first_seen    TEXT NOT NULL,
    last_seen     TEXT NOT NULL,
    article_count INTEGER NOT NULL,
    names         TEXT NOT NULL,
    version       INTEGER NOT NULL,
    state         BLOB NOT NULL
  ) WITHOUT ROWID;
  CREATE INDEX stories_last_seen ON stories(last_seen);
  CREATE TABLE story_merges (
    from_id TEXT PRIMARY KEY,
    into_id TEXT NOT NULL,
    score   REAL NOT NULL,
    at      TEXT NOT NULL
  ) WITHOUT ROWID;
  CREATE INDEX story_merges_into ON story_merges(into_id);
  ALTER TABLE articles ADD COLUMN story_id TEXT;
  CREATE INDEX articles_story ON articles(story_id);
  ALTER TABLE events ADD COLUMN story_id TEXT;
  CREATE INDEX events_story ON events(story_id);
  CREATE TABLE link_tally (id INTEGER PRIMARY KEY CHECK (id = 1), mentions INTEGER NOT NULL, high INTEGER NOT NULL);
  `,
  // States written before labels left them: rewritten without the label (see dropStateLabels).
  dropStateLabels,
  // What each article brought to its story (to divide a story later), and story splits.
  `
  ALTER TABLE articles ADD COLUMN story_vector BLOB;
  ALTER TABLE articles ADD COLUMN story_names TEXT;
  CREATE TABLE story_splits (
    into_id  TEXT PRIMARY KEY,
    from_id  TEXT NOT NULL,
    articles INTEGER NOT NULL,
    score    REAL NOT NULL,
    at       TEXT NOT NULL
  ) WITHOUT ROWID;
  CREATE INDEX story_splits_from ON story_splits(from_id);
  `,
  // The notification log the live stream reads: the outbox rebuilt with each notification
  // numbered as written (AUTOINCREMENT: a number is never given twice, pruning or not).
  // Rows now append at the end instead of landing at the place of a hashed id, which made
  // writing every notification affordable; earlier ones are numbered in the order created.
  `
  CREATE TABLE outbox_log (
    seq     INTEGER PRIMARY KEY AUTOINCREMENT,
    id      TEXT NOT NULL UNIQUE,
    type    TEXT NOT NULL,
    body    TEXT NOT NULL,
    created TEXT NOT NULL
  );
  INSERT INTO outbox_log (id, type, body, created) SELECT id, type, body, created FROM outbox ORDER BY created, id;
  DROP TABLE outbox;
  ALTER TABLE outbox_log RENAME TO outbox;
  `,
  // Subscriptions made through the API as well as the configuration, each with its place in
  // the notification log; each delivery names the alert rule that selected it and how long
  // its last attempt took.
  `
  CREATE TABLE subscriptions (
    seq    INTEGER PRIMARY KEY,
    name   TEXT NOT NULL UNIQUE,
    data   TEXT NOT NULL,
    cursor INTEGER NOT NULL
  );
  ALTER TABLE deliveries ADD COLUMN rule TEXT;
  ALTER TABLE deliveries ADD COLUMN latency_ms INTEGER;
  CREATE INDEX deliveries_subscriber ON deliveries(subscriber, status);
  `,
  // API keys with scopes, kept as SHA-256 hashes; and the audit log of analysts' corrections.
  `
  CREATE TABLE corrections (
    seq  INTEGER PRIMARY KEY,
    id   TEXT NOT NULL UNIQUE,
    data TEXT NOT NULL
  );
  CREATE TABLE api_keys (
    seq  INTEGER PRIMARY KEY,
    id   TEXT NOT NULL UNIQUE,
    data TEXT NOT NULL
  );
  `,
  // Review rounds (the sample with its design) and reviewers' answers.
  `
  CREATE TABLE review_rounds (
    seq  INTEGER PRIMARY KEY,
    id   TEXT NOT NULL UNIQUE,
    data TEXT NOT NULL
  );
  CREATE TABLE review_answers (
    round    TEXT NOT NULL,
    item     INTEGER NOT NULL,
    reviewer TEXT NOT NULL,
    verdict  TEXT NOT NULL,
    at       TEXT NOT NULL,
    PRIMARY KEY (round, item, reviewer)
  );
  `,
];
