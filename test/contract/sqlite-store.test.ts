import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { bareCommit } from '../helpers/bare-commit.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { isStrandError } from '../../src/errors.js';
import { commitWithLabelledState, describeStoreContract } from './store-contract.js';
import { MIGRATIONS } from '../../src/store/sqlite/schema.js';
import Database from 'better-sqlite3';

describeStoreContract('SQLite store in memory', async () => openSqliteStore(':memory:'));
describeStoreContract('SQLite store on disk', async () =>
  openSqliteStore(join(mkdtempSync(join(tmpdir(), 'strandline-store-')), 'db', 'store.sqlite')),
);

describe('document frequencies in the SQLite store', () => {
  it('folds per-article rows into a snapshot without changing the sums', async () => {
    const store = openSqliteStore(':memory:', { idfSnapshotEvery: 2 });
    for (let i = 0; i < 5; i++) {
      await store.commitArticle(
        bareCommit(`a${i}`, {
          commit: {
            idf: {
              docs: 3,
              df: new Map([
                [1, 1],
                [i + 10, 2],
              ]),
            },
          },
        }),
      );
    }
    const { idf } = await store.loadLinkerState();
    expect(idf.docs).toBe(15);
    expect(new Map(idf.df)).toEqual(
      new Map([
        [1, 5],
        [10, 2],
        [11, 2],
        [12, 2],
        [13, 2],
        [14, 2],
      ]),
    );
    await store.close();
  });
});

describe('opening the SQLite store', () => {
  it('refuses a path it cannot open with a clear error', () => {
    let err: unknown;
    try {
      openSqliteStore('/proc/version/not-a-dir/x.sqlite');
    } catch (e) {
      err = e;
    }
    expect(isStrandError(err, 'STRAND_STORE_FAILED')).toBe(true);
  });
});

describe('SQLite store migrations', () => {
  it('rewrites linker states of earlier versions without the label they carried, once, on opening', async () => {
    const path = join(mkdtempSync(join(tmpdir(), 'strandline-store-')), 'store.sqlite');
    const secret = 'The Dunvessel levee failed at night.';
    const old = openSqliteStore(path, { backgroundCheckpoint: false });
    await old.commitArticle(commitWithLabelledState('a1', secret));
    await old.close();
    // The file as the version before the migration (the one function step) left it: what
    // later migrations added goes too.
    const db = new Database(path);
    const step = MIGRATIONS.findIndex((m) => typeof m === 'function');
    db.exec(`ALTER TABLE articles DROP COLUMN story_vector; ALTER TABLE articles DROP COLUMN story_names; DROP TABLE story_splits;
      DROP TABLE subscriptions; DROP TABLE api_keys; DROP TABLE corrections; DROP TABLE review_rounds; DROP TABLE review_answers; DROP INDEX deliveries_subscriber; ALTER TABLE deliveries DROP COLUMN rule; ALTER TABLE deliveries DROP COLUMN latency_ms;
      CREATE TABLE outbox_old (id TEXT PRIMARY KEY, type TEXT NOT NULL, body TEXT NOT NULL, created TEXT NOT NULL) WITHOUT ROWID;
      INSERT INTO outbox_old SELECT id, type, body, created FROM outbox; DROP TABLE outbox; ALTER TABLE outbox_old RENAME TO outbox;`);
    db.pragma(`user_version = ${step}`);
    db.close();

    const store = openSqliteStore(path, { backgroundCheckpoint: false });
    const states = (await store.loadLinkerState()).events;
    expect(states).toHaveLength(1);
    expect(Buffer.from(states[0]!).toString('utf8')).not.toContain('Dunvessel');
    const check = new Database(path, { readonly: true });
    expect(check.pragma('user_version', { simple: true })).toBe(MIGRATIONS.length);
    check.close();
    // The record keeps its label: only the copy in the state went.
    expect((await store.listEvents({ limit: 10, offset: 0 })).events.map((e) => e.label)).toEqual([secret]);
    await store.close();
  });
});
