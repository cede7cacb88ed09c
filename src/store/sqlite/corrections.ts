/**
 * The SQLite store's corrections: each one a transaction that replaces the touched
 * sentences' links, writes or removes events (labels as given) and keeps the record, one
 * JSON document per correction in the order made.
 */
import type Database from 'better-sqlite3';
import type { CorrectionCommit, CorrectionRecord, Corrections, EventUpdate } from '../store.js';
import type { SqliteOutbox } from './outbox.js';
import type { Write } from './when-free.js';

export class SqliteCorrections implements Corrections {
  private readonly tx: (c: CorrectionCommit) => void;

  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
    outbox: Pick<SqliteOutbox, 'queue'>,
    upsertEvent: (u: EventUpdate) => void,
  ) {
    const st = {
      dropLinks: db.prepare('DELETE FROM links WHERE article_id = ? AND sentence_idx = ?'),
      insLink: db.prepare('INSERT INTO links (article_id, sentence_idx, event_id, score, rank, evidence) VALUES (?, ?, ?, ?, ?, ?)'),
      dropEvent: db.prepare('DELETE FROM events WHERE id = ?'),
      dropOutlets: db.prepare('DELETE FROM event_outlets WHERE event_id = ?'),
      setLabel: db.prepare('UPDATE events SET label = ? WHERE id = ?'),
      insRecord: db.prepare('INSERT INTO corrections (id, data) VALUES (?, ?)'),
      undone: db.prepare(`UPDATE corrections SET data = json_set(data, '$.undoneBy', ?) WHERE id = ?`),
    };
    this.tx = db.transaction((c: CorrectionCommit) => {
      for (const k of c.sentences) st.dropLinks.run(k.articleId, k.sentenceIndex);
      for (const l of c.links) st.insLink.run(l.articleId, l.sentenceIndex, l.eventId, l.score, l.rank, JSON.stringify(l.evidence));
      for (const id of c.removed) {
        st.dropEvent.run(id);
        st.dropOutlets.run(id);
      }
      for (const u of c.events) {
        upsertEvent(u);
        st.setLabel.run(u.record.label, u.record.id);
      }
      st.insRecord.run(c.record.id, JSON.stringify(c.record));
      if (c.record.undoes) st.undone.run(c.record.id, c.record.undoes);
      outbox.queue(c.messages);
    });
  }

  async commitCorrection(c: CorrectionCommit): Promise<void> {
    await this.write(`cannot commit correction ${c.record.id}`, () => this.tx(c));
  }

  async listCorrections(limit: number, offset: number): Promise<{ total: number; corrections: CorrectionRecord[] }> {
    const total = this.db.prepare('SELECT count(*) FROM corrections').pluck().get() as number;
    const rows = this.db.prepare('SELECT data FROM corrections ORDER BY seq DESC LIMIT ? OFFSET ?').pluck().all(limit, offset) as string[];
    return { total, corrections: rows.map((d) => JSON.parse(d) as CorrectionRecord) };
  }

  async getCorrection(id: string): Promise<CorrectionRecord | null> {
    const d = this.db.prepare('SELECT data FROM corrections WHERE id = ?').pluck().get(id) as string | undefined;
    return d === undefined ? null : (JSON.parse(d) as CorrectionRecord);
  }
}
