/**
 * The SQLite store's outbox: notifications written to the log in the transaction of the
 * change they report (queue), then delivered per subscription (subscriptions.ts queues the
 * deliveries) with retries and a dead-letter state.
 */
import type Database from 'better-sqlite3';
import type { AttemptOutcome, Delivery, LoggedNotification, NotificationLog, Outbox, OutboxMessage } from '../store.js';
import { type Row, toDelivery } from './rows.js';
import type { Write } from './when-free.js';

export class SqliteOutbox implements Outbox {
  private readonly st;

  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
  ) {
    this.st = {
      // AUTOINCREMENT keeps the last number given in sqlite_sequence, pruning or not.
      lastSeq: db.prepare(`SELECT seq FROM sqlite_sequence WHERE name = 'outbox'`).pluck(),
      firstSeq: db.prepare('SELECT min(seq) FROM outbox').pluck(),
      logAfter: db.prepare('SELECT seq, id, type, body, created FROM outbox WHERE seq > ? ORDER BY seq LIMIT ?'),
      hasMessage: db.prepare('SELECT 1 FROM outbox WHERE id = ?').pluck(),
      insMessage: db.prepare('INSERT INTO outbox (id, type, body, created) VALUES (?, ?, ?, ?)'),
      due: db.prepare(`SELECT d.*, o.type, o.body, o.created FROM deliveries d JOIN outbox o ON o.id = d.message_id
        WHERE d.status = 'pending' AND d.next_at <= ? AND d.subscriber NOT IN (SELECT value FROM json_each(?)) ORDER BY d.next_at LIMIT ?`),
      dead: db.prepare(`SELECT d.*, o.type, o.body, o.created FROM deliveries d JOIN outbox o ON o.id = d.message_id
        WHERE d.status = 'dead' ORDER BY d.next_at DESC LIMIT ?`),
      attempt: db.prepare(
        'UPDATE deliveries SET status = ?, attempts = ?, next_at = ?, last_error = ?, latency_ms = ? WHERE message_id = ? AND subscriber = ?',
      ),
    };
  }

  /** Logs messages inside the caller's transaction. */
  queue(messages: readonly OutboxMessage[]): void {
    for (const msg of messages) {
      // The same change gives the same message: logged again, it keeps its number (an
      // ignored insert would still use one up).
      if (this.st.hasMessage.get(msg.id) === undefined) this.st.insMessage.run(msg.id, msg.type, msg.body, msg.created);
    }
  }

  async dueDeliveries(now: string, limit: number, skip: readonly string[] = []): Promise<Delivery[]> {
    return (this.st.due.all(now, JSON.stringify(skip), limit) as Row[]).map(toDelivery);
  }

  async recordAttempt(messageId: string, subscriber: string, o: AttemptOutcome): Promise<void> {
    await this.write(`cannot record a delivery to ${subscriber}`, () =>
      this.st.attempt.run(o.status, o.attempts, o.nextAt, o.error, Math.round(o.latencyMs), messageId, subscriber),
    );
  }

  async deadLetters(limit: number): Promise<Delivery[]> {
    return (this.st.dead.all(limit) as Row[]).map(toDelivery);
  }

  async notificationsAfter(after: number, limit: number): Promise<NotificationLog> {
    return this.db.transaction(() => ({
      items: this.st.logAfter.all(after, limit) as LoggedNotification[],
      first: (this.st.firstSeq.get() as number | null) ?? null,
      last: (this.st.lastSeq.get() as number | undefined) ?? 0,
    }))();
  }

  async pruneNotifications(before: string): Promise<number> {
    return this.write(
      'cannot prune notifications',
      this.db.transaction(() => {
        // deliveries_due (status, next_at) finds them; a settled delivery's next_at is when it settled.
        this.db.prepare("DELETE FROM deliveries WHERE status IN ('delivered', 'dead') AND next_at < ?").run(before);
        return this.db
          .prepare('DELETE FROM outbox WHERE created < ? AND NOT EXISTS (SELECT 1 FROM deliveries d WHERE d.message_id = outbox.id)')
          .run(before).changes;
      }),
    );
  }
}
