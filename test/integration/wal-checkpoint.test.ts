import { copyFileSync, existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import Database from 'better-sqlite3';
import { afterEach, describe, expect, it } from 'vitest';
import { bareCommit } from '../helpers/bare-commit.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { startWalCheckpointer } from '../../src/store/sqlite/wal-checkpointer.js';
import type { ArticleCommit } from '../../src/store/store.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

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
  return bareCommit(`a${i}`, {
    article: { outlet: 'Harbour Ledger', text: 'x'.repeat(2000), contentHash: `h${i}` },
    commit: { idf: { docs: 0, df: new Map() } },
  });
}

/**
 * Articles readable from the database file alone, as if the log were lost. A copy taken while
 * the thread is writing pages can be torn ("malformed"); that reads as none yet.
 */
function articlesInMainFile(path: string, dir: string): number {
  const copy = join(dir, 'main-only.sqlite');
  copyFileSync(path, copy);
  const db = new Database(copy, { readonly: true });
  try {
    const hasTable = db.prepare("SELECT 1 FROM sqlite_master WHERE name = 'articles'").get() !== undefined;
    return hasTable ? (db.prepare('SELECT count(*) AS n FROM articles').get() as { n: number }).n : 0;
  } catch {
    return 0;
  } finally {
    db.close();
  }
}

/** Polls until the database file alone holds `n` articles (or ten seconds pass); the last count. */
async function waitForMainFile(path: string, n: number): Promise<number> {
  const deadline = Date.now() + 10_000;
  let seen = articlesInMainFile(path, dirname(path));
  while (seen < n && Date.now() < deadline) {
    await new Promise((r) => setTimeout(r, 50));
    seen = articlesInMainFile(path, dirname(path));
  }
  return seen;
}

describe('checkpointing the SQLite log on a thread of its own', () => {
  it('copies committed articles into the database file without the main connection checkpointing', async () => {
    const dir = scratch();
    const path = join(dir, 'store.sqlite');
    const store = openSqliteStore(path);
    for (let i = 0; i < 50; i++) await store.commitArticle(article(i));
    // Too few pages for SQLite's own automatic checkpoint (1000): only the thread moves them.
    expect(await waitForMainFile(path, 50)).toBe(50);
    await store.close();
  });

  it("turns SQLite's own checkpoint back on when the thread cannot open the database", async () => {
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

  it("closes the thread's connection with the store: nothing else holds the file afterwards", async () => {
    const path = join(scratch(), 'store.sqlite');
    const store = openSqliteStore(path);
    for (let i = 0; i < 5; i++) await store.commitArticle(article(i));
    // The thread has its connection open once it has checkpointed.
    expect(await waitForMainFile(path, 5)).toBe(5);
    await store.close();
    // Exclusive locking in WAL mode fails while any other connection has the file open.
    const alone = new Database(path);
    alone.pragma('busy_timeout = 0');
    alone.pragma('locking_mode = EXCLUSIVE');
    expect((alone.prepare('SELECT count(*) AS n FROM articles').get() as { n: number }).n).toBe(5);
    alone.close();
  });
});

describe('erasing text from the SQLite store, then compacting it', () => {
  it('leaves no copy of the erased text in the database file or its log', async () => {
    const dir = scratch();
    const path = join(dir, 'store.sqlite');
    const store = openSqliteStore(path);
    const marker = 'Quillborough-Varnstead-ferry-collision-witness-statement';
    const commit = article(1);
    commit.article.text = `${marker} `.repeat(400);
    await store.commitArticle(commit);
    for (let i = 2; i < 20; i++) await store.commitArticle(article(i));
    expect(await store.eraseArticleText('a1')).toBe(true);
    await store.compact();
    const bytesOnDisk = (): string =>
      ['', '-wal'].map((s) => (existsSync(path + s) ? readFileSync(path + s).toString('latin1') : '')).join('');
    // While the store is still open, and after it is closed.
    expect(bytesOnDisk().includes(marker)).toBe(false);
    await store.close();
    expect(bytesOnDisk().includes(marker)).toBe(false);
  });
});

describe('erasing demo articles after a replay into a SQLite file', () => {
  it('leaves none of their sentences anywhere on disk, while the other articles keep theirs', async () => {
    const dir = scratch();
    const path = join(dir, 'store.sqlite');
    const rt = await testRuntime({}, path);
    const articles = (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles;
    await runArticles(rt, articles);
    const sentencesOf = async (id: string) =>
      ((await rt.store.getArticle(id))?.sentences ?? []).map((s) => s.text ?? '').filter((t) => t.length >= 60);
    // Articles published before the middle day go (the retention path); the rest stay.
    const days = articles.map((a) => (a.published ?? a.fetched).slice(0, 10)).sort();
    const cutoff = days[Math.floor(days.length / 2)]!;
    const before = articles.filter((a) => (a.published ?? a.fetched).slice(0, 10) < cutoff);
    const after = articles.filter((a) => (a.published ?? a.fetched).slice(0, 10) >= cutoff);
    const erased = (await Promise.all(before.map((a) => sentencesOf(a.id)))).flat();
    const kept = (await Promise.all(after.map((a) => sentencesOf(a.id)))).flat();
    expect(erased.length).toBeGreaterThan(20);
    expect(await rt.store.eraseTextBefore(cutoff)).toBe(before.length);
    await rt.store.compact();
    await rt.close();
    const disk = ['', '-wal'].map((s) => (existsSync(path + s) ? readFileSync(path + s).toString('utf8') : '')).join('');
    for (const text of erased) expect(disk.includes(text), text).toBe(false);
    expect(kept.some((t) => disk.includes(t))).toBe(true);
  });
});

describe('a commit while another connection holds the write lock past the busy timeout', () => {
  it('waits and stores the articles instead of refusing them as "database is locked"', async () => {
    const path = join(scratch(), 'busy.sqlite');
    const store = openSqliteStore(path, { busyTimeoutMs: 100, backgroundCheckpoint: false });
    const other = new Database(path);
    try {
      // Another writer (a checkpoint, another process) holds the lock ten busy timeouts long.
      other.exec('BEGIN IMMEDIATE');
      const release = setTimeout(() => other.exec('COMMIT'), 1000);
      const started = Date.now();
      expect(await store.commitArticles([article(1), article(2)])).toEqual(['stored', 'stored']);
      clearTimeout(release);
      expect(Date.now() - started).toBeGreaterThanOrEqual(900);
      expect((await store.counts()).articles).toBe(2);
    } finally {
      if (other.inTransaction) other.exec('COMMIT');
      other.close();
      await store.close();
    }
  });
});
