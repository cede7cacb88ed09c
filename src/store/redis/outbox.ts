/**
 * The Redis store's outbox deliveries: due and dead sets of `<message>\n<subscriber>`
 * members, each delivery's state in one hash, settled ones indexed for pruning. Messages
 * are written to the log by the commit scripts, in the transaction of the change they
 * report; deliveries are queued by fan-out (subscriptions.ts).
 */
import type { AttemptOutcome, Delivery, LoggedNotification, NotificationLog, Outbox } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';
import { pipelined, splitMember } from './pipelined.js';
import type { defineScript } from './scripts.js';

/** Due deliveries read per page when some subscribers are skipped, and at most in all. */
const DUE_PAGE = 500;
const DUE_SCAN = 20_000;
/** Deliveries one pruning script call removes at most. */
const PRUNE_BATCH = 500;

export class RedisOutbox implements Outbox {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
    private readonly prune: ReturnType<typeof defineScript>,
    private readonly record: ReturnType<typeof defineScript>,
  ) {}

  async notificationsAfter(after: number, limit: number): Promise<NotificationLog> {
    const [page, first, last] = (await this.redis
      .multi()
      .zrangebyscore(this.k.outboxLog, `(${after}`, '+inf', 'WITHSCORES', 'LIMIT', 0, limit)
      .zrange(this.k.outboxLog, '0', '0', 'WITHSCORES')
      .get(this.k.outboxSeq)
      .exec())!.map(([err, v]) => {
      if (err) throw err;
      return v;
    }) as [string[], string[], string | null];
    const ids = page.filter((_, i) => i % 2 === 0);
    const rows = (await pipelined(this.redis, ids, (p, id) => p.hmget(this.k.outbox(id), 'type', 'body', 'created'))) as (
      (string | null)[] | null
    )[];
    const items: LoggedNotification[] = [];
    ids.forEach((id, i) => {
      const r = rows[i];
      // Pruned between the two reads: gone, as if read a moment later.
      if (r?.[0] && r[1] && r[2]) items.push({ seq: Number(page[2 * i + 1]), id, type: r[0], body: r[1], created: r[2] });
    });
    return { items, first: first.length ? Number(first[1]) : null, last: last === null ? 0 : Number(last) };
  }

  async dueDeliveries(now: string, limit: number, skip: readonly string[] = []): Promise<Delivery[]> {
    const until = String(Date.parse(now));
    if (skip.length === 0) return this.deliveries(await this.redis.zrangebyscore(this.k.due, '-inf', until, 'LIMIT', 0, limit));
    // Members are `<message>\n<subscriber>`: pages are read past the skipped subscribers'
    // backlog, up to DUE_SCAN members, so a receiver that hangs never hides the others'.
    const skipped = new Set(skip);
    const keys: string[] = [];
    for (let offset = 0; keys.length < limit && offset < DUE_SCAN; offset += DUE_PAGE) {
      const page = await this.redis.zrangebyscore(this.k.due, '-inf', until, 'LIMIT', offset, DUE_PAGE);
      for (const key of page) if (keys.length < limit && !skipped.has(splitMember(key)[1])) keys.push(key);
      if (page.length < DUE_PAGE) break;
    }
    return this.deliveries(keys);
  }

  async recordAttempt(messageId: string, subscriber: string, o: AttemptOutcome): Promise<void> {
    const outcome = { status: o.status, attempts: o.attempts, nextAt: o.nextAt, lastError: o.error, latencyMs: Math.round(o.latencyMs) };
    await this.record(this.k.deliveries, this.k.prefix, `${messageId}\n${subscriber}`, JSON.stringify(outcome), Date.parse(o.nextAt));
  }

  async pruneNotifications(before: string): Promise<number> {
    await this.indexSettled();
    let removed = 0;
    for (;;) {
      // Batches keep each script call short: Redis runs nothing else meanwhile.
      const [deliveries, messages, unsubscribed] = (await this.prune(this.k.settled, this.k.prefix, Date.parse(before), PRUNE_BATCH)) as [
        number,
        number,
        number,
      ];
      removed += messages;
      if (deliveries < PRUNE_BATCH && unsubscribed < PRUNE_BATCH) return removed;
    }
  }

  /** Puts deliveries settled before the settled index existed into it, once per partition. */
  private async indexSettled(): Promise<void> {
    if (await this.redis.exists(this.k.settledIndexed)) return;
    let cursor = '0';
    do {
      const [next, flat] = await this.redis.hscan(this.k.deliveries, cursor, 'COUNT', 1000);
      const tx = this.redis.multi();
      for (let i = 0; i < flat.length; i += 2) {
        const s = JSON.parse(flat[i + 1]!) as { status: Delivery['status']; nextAt: string };
        if (s.status !== 'pending') tx.zadd(this.k.settled, Date.parse(s.nextAt), flat[i]!);
      }
      await tx.exec();
      cursor = next;
    } while (cursor !== '0');
    await this.redis.set(this.k.settledIndexed, '1');
  }

  async deadLetters(limit: number): Promise<Delivery[]> {
    return this.deliveries(await this.redis.zrevrange(this.k.dead, 0, limit - 1));
  }

  /** The deliveries with these keys (`<message>\n<subscriber>`), in that order (one pruned meanwhile is left out). */
  async deliveries(keys: readonly string[]): Promise<Delivery[]> {
    if (keys.length === 0) return [];
    const states = await this.redis.hmget(this.k.deliveries, ...keys);
    const messages = (await pipelined(this.redis, keys, (p, key) =>
      p.hmget(this.k.outbox(splitMember(key)[0]), 'type', 'body', 'created'),
    )) as (string | null)[][];
    return keys.flatMap((key, i) => {
      const [messageId, subscriber] = splitMember(key);
      const [type, body, created] = messages[i]!;
      if (!states[i] || !type || !body || !created) return [];
      const s = JSON.parse(states[i]) as Omit<Delivery, 'messageId' | 'subscriber' | 'type' | 'body' | 'created'>;
      return [{ messageId, subscriber, type, body, created, ...s, rule: s.rule ?? null, latencyMs: s.latencyMs ?? null }];
    });
  }
}
