/** The SQLite store's polled feeds: one JSON document per feed, in the order they were added. */
import type Database from 'better-sqlite3';
import type { FeedEntry, FeedRegistry } from '../store.js';
import type { Write } from './when-free.js';

export class SqliteFeedRegistry implements FeedRegistry {
  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
  ) {}

  async listFeeds(): Promise<FeedEntry[]> {
    return (this.db.prepare('SELECT data FROM feeds ORDER BY seq').pluck().all() as string[]).map((d) => JSON.parse(d) as FeedEntry);
  }

  async putFeed(f: FeedEntry): Promise<void> {
    await this.write(`cannot store feed ${f.id}`, () =>
      this.db
        .prepare('INSERT INTO feeds (id, data) VALUES (?, ?) ON CONFLICT (id) DO UPDATE SET data = excluded.data')
        .run(f.id, JSON.stringify(f)),
    );
  }

  async updateFeed(id: string, change: (f: FeedEntry) => FeedEntry): Promise<FeedEntry | null> {
    return this.write(
      `cannot update feed ${id}`,
      this.db.transaction((): FeedEntry | null => {
        const data = this.db.prepare('SELECT data FROM feeds WHERE id = ?').pluck().get(id) as string | undefined;
        if (data === undefined) return null;
        const next = change(JSON.parse(data) as FeedEntry);
        this.db.prepare('UPDATE feeds SET data = ? WHERE id = ?').run(JSON.stringify(next), id);
        return next;
      }),
    );
  }

  async deleteFeed(id: string): Promise<boolean> {
    return this.db.prepare('DELETE FROM feeds WHERE id = ?').run(id).changes > 0;
  }
}
