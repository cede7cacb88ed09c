/** The SQLite store's review rounds (one JSON document each, items included) and their answers (one row per item and reviewer). */
import type Database from 'better-sqlite3';
import type { ReviewAnswer, ReviewRound, Reviews } from '../store.js';
import type { Write } from './when-free.js';

export class SqliteReviews implements Reviews {
  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
  ) {}

  async addReviewRound(r: ReviewRound): Promise<void> {
    await this.write(`cannot store review round ${r.id}`, () =>
      this.db.prepare('INSERT INTO review_rounds (id, data) VALUES (?, ?)').run(r.id, JSON.stringify(r)),
    );
  }

  async listReviewRounds(): Promise<Omit<ReviewRound, 'items'>[]> {
    const rows = this.db.prepare('SELECT data FROM review_rounds ORDER BY seq DESC').pluck().all() as string[];
    return rows.map((d) => {
      const { items: _, ...round } = JSON.parse(d) as ReviewRound;
      return round;
    });
  }

  async getReviewRound(id: string): Promise<ReviewRound | null> {
    const d = this.db.prepare('SELECT data FROM review_rounds WHERE id = ?').pluck().get(id) as string | undefined;
    return d ? (JSON.parse(d) as ReviewRound) : null;
  }

  async putReviewAnswer(a: ReviewAnswer): Promise<void> {
    await this.write(`cannot store an answer for review round ${a.round}`, () =>
      this.db
        .prepare(
          `INSERT INTO review_answers (round, item, reviewer, verdict, at) VALUES (@round, @item, @reviewer, @verdict, @at)
           ON CONFLICT (round, item, reviewer) DO UPDATE SET verdict = excluded.verdict, at = excluded.at`,
        )
        .run(a),
    );
  }

  async reviewAnswers(round: string): Promise<ReviewAnswer[]> {
    return this.db
      .prepare('SELECT round, item, reviewer, verdict, at FROM review_answers WHERE round = ? ORDER BY item, reviewer')
      .all(round) as ReviewAnswer[];
  }
}
