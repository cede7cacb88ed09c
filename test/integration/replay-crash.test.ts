import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { describe, expect, it } from 'vitest';
import { DEMO_DIR } from '../helpers/demo.js';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const CLI = ['--import', 'tsx', join(ROOT, 'src/cli/main.ts')];

function replay(db: string, extra: string[] = []) {
  return spawnSync(
    process.execPath,
    [...CLI, 'replay', `${DEMO_DIR}feeds`, '--db', db, '--no-progress', '--log-level', 'silent', ...extra],
    { cwd: ROOT, encoding: 'utf8', timeout: 120_000 },
  );
}

function count(db: string, sql: string): number {
  const d = new Database(db, { readonly: true });
  try {
    return d.prepare(sql).pluck().get() as number;
  } finally {
    d.close();
  }
}

/** Every event as the set of sentence keys linked to it, for comparing partitions. */
function partition(db: string): string[] {
  const d = new Database(db, { readonly: true });
  try {
    const rows = d
      .prepare(
        "SELECT event_id, group_concat(article_id || '#' || sentence_idx, ' ') AS members FROM (SELECT * FROM links ORDER BY article_id, sentence_idx) GROUP BY event_id",
      )
      .all() as { members: string }[];
    return rows.map((r) => r.members).sort();
  } finally {
    d.close();
  }
}

/** Every link with its event, rank and score, for comparing runs bit for bit. */
function linkRows(db: string): string[] {
  const d = new Database(db, { readonly: true });
  try {
    return d
      .prepare("SELECT article_id || '#' || sentence_idx || '#' || rank || ' ' || event_id || ' ' || score FROM links ORDER BY 1")
      .pluck()
      .all() as string[];
  } finally {
    d.close();
  }
}

/** Each story as its sorted articles, and its record (label, article count, names). */
function stories(db: string): string[] {
  const d = new Database(db, { readonly: true });
  try {
    return d
      .prepare(
        `SELECT s.id || ' ' || s.article_count || ' ' || s.names || ' ' || (SELECT group_concat(id, ' ') FROM (SELECT id FROM articles a WHERE a.story_id = s.id ORDER BY id))
      FROM stories s ORDER BY s.id`,
      )
      .pluck()
      .all() as string[];
  } finally {
    d.close();
  }
}

describe('a replay killed with SIGKILL and started again', () => {
  it('stores every article once, no mention twice, and gives the stories and events of an uninterrupted run, score for score', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strandline-crash-'));
    const clean = join(dir, 'clean.sqlite');
    const crashed = join(dir, 'crashed.sqlite');
    expect(replay(clean).status).toBe(0);

    // Pace the replay so that the kill lands in the middle of it.
    const child = spawn(
      process.execPath,
      [...CLI, 'replay', `${DEMO_DIR}feeds`, '--db', crashed, '--no-progress', '--log-level', 'silent', '--pace', '40'],
      { cwd: ROOT, stdio: 'ignore' },
    );
    const exited = new Promise((r) => child.once('exit', r));
    let stored = 0;
    for (let i = 0; i < 600 && stored < 30; i++) {
      await new Promise((r) => setTimeout(r, 50));
      try {
        stored = count(crashed, 'SELECT count(*) FROM articles');
      } catch {
        stored = 0; // the file or its tables may not exist yet
      }
    }
    child.kill('SIGKILL');
    await exited;
    const before = count(crashed, 'SELECT count(*) FROM articles');
    expect(before).toBeGreaterThanOrEqual(30);
    expect(before).toBeLessThan(101);

    const resumed = replay(crashed);
    expect(resumed.status).toBe(0);
    expect(resumed.stdout).toMatch(new RegExp(`${before} already stored before`));

    expect(count(crashed, 'SELECT count(*) FROM articles')).toBe(101);
    expect(count(crashed, 'SELECT count(DISTINCT id) FROM articles')).toBe(101);
    expect(count(crashed, 'SELECT count(*) FROM (SELECT 1 FROM mentions GROUP BY article_id, sentence_idx HAVING count(*) > 1)')).toBe(0);
    expect(count(crashed, 'SELECT count(*) FROM mentions')).toBe(count(clean, 'SELECT count(*) FROM mentions'));
    expect(count(crashed, 'SELECT count(*) FROM sentences')).toBe(count(clean, 'SELECT count(*) FROM sentences'));
    expect(partition(crashed)).toEqual(partition(clean));
    // Not only the same events: every link's score, as the linker resumes from the store exactly.
    expect(linkRows(crashed)).toEqual(linkRows(clean));
    expect(stories(crashed)).toEqual(stories(clean));
    expect(stories(clean).length).toBeGreaterThan(5);
  });
});
