/**
 * The Redis store's subscriptions: one JSON document each in a hash, their order in a
 * sorted set, each one's place in the notification log in another hash, and each one's
 * deliveries indexed by notification number (its delivery log).
 */
import { StrandError } from '../../errors.js';
import type { Delivery, Subscription, Subscriptions } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';
import type { RedisOutbox } from './outbox.js';
import { splitMember } from './pipelined.js';
import type { defineScript } from './scripts.js';

type Script = ReturnType<typeof defineScript>;

/** Tries of an update that other writers keep overtaking. */
const UPDATE_ATTEMPTS = 50;
/** A delivery log filtered by status reads this many entries at a time, and at most DELIVERY_SCAN. */
const DELIVERY_PAGE = 200;
const DELIVERY_SCAN = 20_000;

export class RedisSubscriptions implements Subscriptions {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
    private readonly outbox: Pick<RedisOutbox, 'deliveries'>,
    private readonly scripts: { fanOut: Script; putSubscription: Script; setIfUnchanged: Script },
  ) {}

  async listSubscriptions(): Promise<(Subscription & { cursor: number })[]> {
    const names = await this.redis.zrange(this.k.subscriptionOrder, '0', '-1');
    if (names.length === 0) return [];
    const [data, cursors] = await Promise.all([
      this.redis.hmget(this.k.subscriptions, ...names),
      this.redis.hmget(this.k.subscriptionCursors, ...names),
    ]);
    return names.flatMap((_, i) => (data[i] ? [{ ...(JSON.parse(data[i]) as Subscription), cursor: Number(cursors[i] ?? 0) }] : []));
  }

  async addSubscription(s: Subscription, cursor: number): Promise<boolean> {
    return (await this.put(s, cursor, true)) === 1;
  }

  async putSubscription(s: Subscription, cursor: number): Promise<void> {
    await this.put(s, cursor, false);
  }

  private put(s: Subscription, cursor: number, refuseTaken: boolean): Promise<unknown> {
    return this.scripts.putSubscription(
      this.k.subscriptions,
      this.k.prefix,
      s.name,
      JSON.stringify(s),
      cursor,
      Date.parse(s.created) || 0,
      refuseTaken ? '1' : '0',
    );
  }

  async updateSubscription(name: string, change: (s: Subscription) => Subscription): Promise<Subscription | null> {
    // Compare and set: an api process may change it while another rotates its secret.
    for (let attempt = 0; attempt < UPDATE_ATTEMPTS; attempt++) {
      const data = await this.redis.hget(this.k.subscriptions, name);
      if (data === null) return null;
      const next = { ...change(JSON.parse(data) as Subscription), name };
      const done = await this.scripts.setIfUnchanged(this.k.subscriptions, name, data, JSON.stringify(next));
      if (done === 1) return next;
      if (done === -1) return null;
      await new Promise((r) => setTimeout(r, Math.random() * (attempt + 1) * 2));
    }
    throw new StrandError('STRAND_STORE_FAILED', `subscription ${name} kept changing under ${UPDATE_ATTEMPTS} attempts to update it`);
  }

  async deleteSubscription(name: string): Promise<boolean> {
    const [[, removed]] = (await this.redis
      .multi()
      .hdel(this.k.subscriptions, name)
      .hdel(this.k.subscriptionCursors, name)
      .zrem(this.k.subscriptionOrder, name)
      .del(this.k.subscriptionDeliveries(name))
      .exec())! as [[Error | null, number]];
    return removed === 1;
  }

  async fanOut(
    name: string,
    from: number,
    to: number,
    deliveries: readonly { messageId: string; rule: string }[],
    now: string,
  ): Promise<boolean> {
    const list = JSON.stringify(deliveries.map((d) => ({ id: d.messageId, rule: d.rule })));
    const done = await this.scripts.fanOut(this.k.subscriptionCursors, this.k.prefix, name, from, to, Date.parse(now), now, list);
    return done === 1;
  }

  async subscriptionDeliveries(name: string, limit: number, status?: Delivery['status']): Promise<Delivery[]> {
    const key = this.k.subscriptionDeliveries(name);
    if (status === undefined) return this.outbox.deliveries(await this.redis.zrevrange(key, 0, limit - 1));
    const out: Delivery[] = [];
    for (let offset = 0; out.length < limit && offset < DELIVERY_SCAN; offset += DELIVERY_PAGE) {
      const page = await this.redis.zrevrange(key, offset, offset + DELIVERY_PAGE - 1);
      for (const d of await this.outbox.deliveries(page)) if (d.status === status && out.length < limit) out.push(d);
      if (page.length < DELIVERY_PAGE) break;
    }
    return out;
  }

  async replayDeadLetters(name: string, now: string): Promise<number> {
    const keys = (await this.redis.zrange(this.k.dead, '0', '-1')).filter((key) => splitMember(key)[1] === name);
    if (keys.length === 0) return 0;
    const states = await this.redis.hmget(this.k.deliveries, ...keys);
    const at = Date.parse(now);
    const tx = this.redis.multi();
    let replayed = 0;
    keys.forEach((key, i) => {
      if (!states[i]) return;
      const s = { ...(JSON.parse(states[i]) as object), status: 'pending', attempts: 0, nextAt: now, lastError: null };
      tx.hset(this.k.deliveries, key, JSON.stringify(s)).zadd(this.k.due, at, key).zrem(this.k.dead, key).zrem(this.k.settled, key);
      replayed++;
    });
    await tx.exec();
    return replayed;
  }
}
