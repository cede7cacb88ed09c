/**
 * The SQLite store's retention: stored text erased on the operator's schedule or on request,
 * with what was derived from it (vectors, sketches, labels drawn from it, copies in
 * notifications), and compaction so no freed page keeps a copy.
 */
import type Database from 'better-sqlite3';
import { StrandError } from '../../errors.js';
import { ERASED_LABEL, drawnFrom, relabelAfter } from '../../link/labels.js';
import type { Retention } from '../store.js';
import { type Row, labelStatements } from './rows.js';
import type { Write } from './when-free.js';

export class SqliteRetention implements Retention {
  private readonly st;

  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
  ) {
    this.st = {
      ...labelStatements(db),
      hasArticle: db.prepare('SELECT 1 FROM articles WHERE id = ?').pluck(),
    };
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
    db.prepare('UPDATE articles SET story_vector = NULL WHERE id = ?').run(id);
    db.prepare('UPDATE articles SET sketch = NULL WHERE id = ?').run(id);
    const events = db
      .prepare('SELECT DISTINCT e.id, e.label FROM links l JOIN events e ON e.id = l.event_id WHERE l.article_id = ?')
      .all(id) as Row[];
    const erasedSet = new Set(erased);
    for (const e of events) {
      const relabel = relabelAfter(e.label as string, erasedSet, () => this.st.earliestText.get(e.id) as string | undefined);
      if (relabel !== null) this.st.setLabel.run(relabel, e.id);
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
}
