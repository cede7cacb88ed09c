import { copyFileSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterEach, describe, expect, it } from 'vitest';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { startWalCheckpointer } from '../../src/store/sqlite/wal-checkpointer.js';
import type { ArticleCommit } from '../../src/store/store.js';

const dirs: string[] = [];
function scratch(): string {
  const dir = mkdtempSync(join(tmpdir(), 'strandline-wal-'));
  dirs.push(dir);
  return dir;
}
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

function article(i: number): ArticleCommit {
  return {
    article: { id: `a${i}`, outlet: 'Harbour Ledger', url: null, title: 't', published: null, fetched: '2026-10-01T00:00:00.000Z', language: null, text: 'x'.repeat(2000), contentHash: `h${i}`, duplicateOf: null, source: 's' },
    sentences: [], mentions: [], links: [], events: [], messages: [], idf: { docs: 0, df: new Map() },
  };
}

/** Articles readable from the database file alone, as if the log were lost. */
function articlesInMainFile(path: string, dir: string): number {
  const copy = join(dir, 'main-only.sqlite');
  copyFileSync(path, copy);
  const db = new Database(copy, { readonly: true });
  try {
    const hasTable = db.prepare("SELECT 1 FROM sqlite_master WHERE name = 'articles'").get() !== undefined;
    return hasTable ? (db.prepare('SELECT count(*) AS n FROM articles').get() as { n: number }).n : 0;
  } finally {
    db.close();
  }
}

describe('checkpointing the SQLite log on a thread of its own', () => {
  it('copies committed articles into the database file without the main connection checkpointing', async () => {
    const dir = scratch();
    const path = join(dir, 'store.sqlite');
    const store = openSqliteStore(path);
    for (let i = 0; i < 50; i++) await store.commitArticle(article(i));
    // Too few pages for SQLite's own automatic checkpoint (1000): only the thread moves them.
    const deadline = Date.now() + 10_000;
    while (articlesInMainFile(path, dir) < 50 && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100));
    expect(articlesInMainFile(path, dir)).toBe(50);
    await store.close();
  });

  it('turns SQLite\'s own checkpoint back on when the thread cannot open the database', async () => {
    const dir = scratch();
    const db = new Database(join(dir, 'store.sqlite'));
    db.pragma('journal_mode = WAL');
    db.pragma('wal_autocheckpoint = 0');
    const warnings: unknown[] = [];
    const checkpointer = startWalCheckpointer(db, join(dir, 'missing.sqlite'), { warn: (o: unknown) => warnings.push(o) });
    const deadline = Date.now() + 10_000;
    while (warnings.length === 0 && Date.now() < deadline) await new Promise((r) => setTimeout(r, 50));
    expect(db.pragma('wal_autocheckpoint', { simple: true })).toBe(1000);
    expect(warnings).toHaveLength(1);
    await checkpointer.stop();
    db.close();
  });

  it('is not started for a store in memory, and a closed store leaves no thread behind', async () => {
    const store = openSqliteStore(':memory:');
    await store.close();
    const onDisk = openSqliteStore(join(scratch(), 'store.sqlite'));
    await onDisk.close();
  });
});
