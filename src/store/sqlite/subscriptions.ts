/**
 * The SQLite store's subscriptions: one JSON document each with its place in the
 * notification log, and the hand-over of selected notifications to their deliveries.
 */
import type Database from 'better-sqlite3';
import type { Delivery, Subscription, Subscriptions } from '../store.js';
import { type Row, toDelivery } from './rows.js';
import type { Write } from './when-free.js';

export class SqliteSubscriptions implements Subscriptions {
  private readonly st;

  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
  ) {
    this.st = {
      list: db.prepare('SELECT data, cursor FROM subscriptions ORDER BY seq'),
      get: db.prepare('SELECT data FROM subscriptions WHERE name = ?').pluck(),
      add: db.prepare('INSERT OR IGNORE INTO subscriptions (name, data, cursor) VALUES (?, ?, ?)'),
      put: db.prepare(
        'INSERT INTO subscriptions (name, data, cursor) VALUES (?, ?, ?) ON CONFLICT (name) DO UPDATE SET data = excluded.data',
      ),
      set: db.prepare('UPDATE subscriptions SET data = ? WHERE name = ?'),
      del: db.prepare('DELETE FROM subscriptions WHERE name = ?'),
      move: db.prepare('UPDATE subscriptions SET cursor = ? WHERE name = ? AND cursor = ?'),
      queue: db.prepare(
        `INSERT OR IGNORE INTO deliveries (message_id, subscriber, status, attempts, next_at, last_error, rule) VALUES (?, ?, 'pending', 0, ?, NULL, ?)`,
      ),
      log: db.prepare(`SELECT d.*, o.type, o.body, o.created FROM deliveries d JOIN outbox o ON o.id = d.message_id
        WHERE d.subscriber = ? AND (? IS NULL OR d.status = ?) ORDER BY o.seq DESC LIMIT ?`),
      replay: db.prepare(
        `UPDATE deliveries SET status = 'pending', attempts = 0, next_at = ?, last_error = NULL WHERE subscriber = ? AND status = 'dead'`,
      ),
    };
  }

  async listSubscriptions(): Promise<(Subscription & { cursor: number })[]> {
    return (this.st.list.all() as Row[]).map((r) => ({ ...(JSON.parse(r.data as string) as Subscription), cursor: r.cursor as number }));
  }

  async addSubscription(s: Subscription, cursor: number): Promise<boolean> {
    return this.write(`cannot store subscription ${s.name}`, () => this.st.add.run(s.name, JSON.stringify(s), cursor).changes > 0);
  }

  async putSubscription(s: Subscription, cursor: number): Promise<void> {
    await this.write(`cannot store subscription ${s.name}`, () => this.st.put.run(s.name, JSON.stringify(s), cursor));
  }

  async updateSubscription(name: string, change: (s: Subscription) => Subscription): Promise<Subscription | null> {
    return this.write(
      `cannot update subscription ${name}`,
      this.db.transaction((): Subscription | null => {
        const data = this.st.get.get(name) as string | undefined;
        if (data === undefined) return null;
        const next = { ...change(JSON.parse(data) as Subscription), name };
        this.st.set.run(JSON.stringify(next), name);
        return next;
      }),
    );
  }

  async deleteSubscription(name: string): Promise<boolean> {
    return this.write(`cannot delete subscription ${name}`, () => this.st.del.run(name).changes > 0);
  }

  async fanOut(
    name: string,
    from: number,
    to: number,
    deliveries: readonly { messageId: string; rule: string }[],
    now: string,
  ): Promise<boolean> {
    return this.write(
      `cannot queue deliveries to ${name}`,
      this.db.transaction((): boolean => {
        if (this.st.move.run(to, name, from).changes === 0) return false;
        for (const d of deliveries) this.st.queue.run(d.messageId, name, now, d.rule);
        return true;
      }),
    );
  }

  async subscriptionDeliveries(name: string, limit: number, status?: Delivery['status']): Promise<Delivery[]> {
    return (this.st.log.all(name, status ?? null, status ?? null, limit) as Row[]).map(toDelivery);
  }

  async replayDeadLetters(name: string, now: string): Promise<number> {
    return this.write(`cannot replay dead letters of ${name}`, () => this.st.replay.run(now, name).changes);
  }
}
