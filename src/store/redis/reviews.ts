/** The Redis store's review rounds (a hash of JSON documents, their order in a sorted set) and answers (a hash per round). */
import type { ReviewAnswer, ReviewRound, Reviews } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';

export class RedisReviews implements Reviews {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
  ) {}

  async addReviewRound(r: ReviewRound): Promise<void> {
    await this.redis
      .multi()
      .hset(this.k.reviewRounds, r.id, JSON.stringify(r))
      .zadd(this.k.reviewRoundOrder, String(Date.parse(r.created) || 0), r.id)
      .exec();
  }

  async listReviewRounds(): Promise<Omit<ReviewRound, 'items'>[]> {
    const ids = await this.redis.zrevrange(this.k.reviewRoundOrder, 0, -1);
    const data = ids.length ? await this.redis.hmget(this.k.reviewRounds, ...ids) : [];
    return data
      .filter((d): d is string => d !== null)
      .map((d) => {
        const { items: _, ...round } = JSON.parse(d) as ReviewRound;
        return round;
      });
  }

  async getReviewRound(id: string): Promise<ReviewRound | null> {
    const d = await this.redis.hget(this.k.reviewRounds, id);
    return d ? (JSON.parse(d) as ReviewRound) : null;
  }

  async putReviewAnswer(a: ReviewAnswer): Promise<void> {
    await this.redis.hset(this.k.reviewAnswers(a.round), `${a.item}\n${a.reviewer}`, JSON.stringify(a));
  }

  async reviewAnswers(round: string): Promise<ReviewAnswer[]> {
    const all = Object.values(await this.redis.hgetall(this.k.reviewAnswers(round))).map((d) => JSON.parse(d) as ReviewAnswer);
    return all.sort((x, y) => x.item - y.item || (x.reviewer < y.reviewer ? -1 : x.reviewer > y.reviewer ? 1 : 0));
  }
}
