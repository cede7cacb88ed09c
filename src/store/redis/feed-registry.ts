/** The Redis store's polled feeds: one JSON document per feed in a hash, their order in a sorted set. */
import { StrandError } from '../../errors.js';
import type { FeedEntry, FeedRegistry } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';
import type { defineScript } from './scripts.js';

/** Tries of a feed update that other writers keep overtaking. */
const FEED_UPDATE_ATTEMPTS = 50;

export class RedisFeedRegistry implements FeedRegistry {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
    private readonly setIfUnchanged: ReturnType<typeof defineScript>,
  ) {}

  async listFeeds(): Promise<FeedEntry[]> {
    const ids = await this.redis.zrange(this.k.feedOrder, '0', '-1');
    const data = ids.length ? await this.redis.hmget(this.k.feeds, ...ids) : [];
    return data.filter((d): d is string => d !== null).map((d) => JSON.parse(d) as FeedEntry);
  }

  async putFeed(f: FeedEntry): Promise<void> {
    // NX keeps a feed's place in the list when it is written again.
    await this.redis
      .multi()
      .hset(this.k.feeds, f.id, JSON.stringify(f))
      .zadd(this.k.feedOrder, 'NX', String(Date.parse(f.added) || 0), f.id)
      .exec();
  }

  async updateFeed(id: string, change: (f: FeedEntry) => FeedEntry): Promise<FeedEntry | null> {
    // Compare and set: another process (an api process serving a change, the polling one
    // saving a poll) may write the feed between the read and the write.
    for (let attempt = 0; attempt < FEED_UPDATE_ATTEMPTS; attempt++) {
      const data = await this.redis.hget(this.k.feeds, id);
      if (data === null) return null;
      const next = change(JSON.parse(data) as FeedEntry);
      const done = await this.setIfUnchanged(this.k.feeds, id, data, JSON.stringify(next));
      if (done === 1) return next;
      if (done === -1) return null;
      // Overtaken: wait a little (longer each time, with jitter) so that contenders spread out.
      await new Promise((r) => setTimeout(r, Math.random() * (attempt + 1) * 2));
    }
    throw new StrandError('STRAND_STORE_FAILED', `feed ${id} kept changing under ${FEED_UPDATE_ATTEMPTS} attempts to update it`);
  }

  async deleteFeed(id: string): Promise<boolean> {
    const [[, removed]] = (await this.redis.multi().hdel(this.k.feeds, id).zrem(this.k.feedOrder, id).exec())! as [[Error | null, number]];
    return removed === 1;
  }
}
