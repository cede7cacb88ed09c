/**
 * The SQLite store's corrections: each one a transaction that replaces the touched
 * sentences' links, writes or removes events (labels as given) and keeps the record, one
 * JSON document per correction in the order made.
 */
import type Database from 'better-sqlite3';
import type {
  CorrectionCommit,
  CorrectionRecord,
  Corrections,
  EventUpdate,
  StoryUnmergeCommit,
  StoryUnsplitCommit,
  StoryUpdate,
} from '../store.js';
import type { SqliteOutbox } from './outbox.js';
import type { Write } from './when-free.js';

export class SqliteCorrections implements Corrections {
  private readonly tx: (c: CorrectionCommit) => void;
  private readonly unmergeTx: (u: StoryUnmergeCommit) => void;
  private readonly unsplitTx: (u: StoryUnsplitCommit) => void;
  /** Keeps a record (inside the caller's transaction), marking the correction it undoes. */
  readonly record: (r: CorrectionRecord) => void;

  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
    outbox: Pick<SqliteOutbox, 'queue'>,
    upsertEvent: (u: EventUpdate) => void,
    upsertStory: (u: StoryUpdate) => void,
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
    this.record = (r) => {
      st.insRecord.run(r.id, JSON.stringify(r));
      if (r.undoes) st.undone.run(r.id, r.undoes);
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
      this.record(c.record);
      outbox.queue(c.messages);
    });
    const storyOf = db.prepare('UPDATE articles SET story_id = ? WHERE id = ?');
    const eventStory = db.prepare('UPDATE events SET story_id = ? WHERE id = ?');
    this.unmergeTx = db.transaction((u: StoryUnmergeCommit) => {
      const from = u.from.record.id;
      db.prepare('DELETE FROM story_merges WHERE from_id = ?').run(from);
      for (const a of u.articles) storyOf.run(from, a);
      for (const e of u.events) eventStory.run(from, e);
      for (const x of u.earlier) db.prepare('UPDATE story_merges SET into_id = ? WHERE from_id = ?').run(from, x);
      upsertStory(u.from);
      upsertStory(u.into);
      this.record(u.correction);
      outbox.queue(u.messages);
    });
    this.unsplitTx = db.transaction((u: StoryUnsplitCommit) => {
      const from = u.from.record.id;
      for (const a of u.moved) storyOf.run(from, a);
      for (const e of u.events) {
        upsertEvent(e);
        eventStory.run(from, e.record.id);
      }
      db.prepare('DELETE FROM stories WHERE id = ?').run(u.into);
      db.prepare('DELETE FROM story_splits WHERE into_id = ?').run(u.into);
      upsertStory(u.from);
      this.record(u.correction);
      outbox.queue(u.messages);
    });
  }

  async commitCorrection(c: CorrectionCommit): Promise<void> {
    await this.write(`cannot commit correction ${c.record.id}`, () => this.tx(c));
  }

  async commitStoryUnmerge(u: StoryUnmergeCommit): Promise<void> {
    await this.write(`cannot undo the merge of story ${u.from.record.id}`, () => this.unmergeTx(u));
  }

  async commitStoryUnsplit(u: StoryUnsplitCommit): Promise<void> {
    await this.write(`cannot undo the split of story ${u.into}`, () => this.unsplitTx(u));
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
