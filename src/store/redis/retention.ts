/** The Redis store's retention: stored text erased by one script per article, with what was derived from it. */
import { ERASED_LABEL } from '../../link/labels.js';
import type { Retention } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';
import type { defineScript } from './scripts.js';

export class RedisRetention implements Retention {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
    private readonly eraseArticle: ReturnType<typeof defineScript>,
  ) {}

  async eraseTextBefore(day: string): Promise<number> {
    const ids = await this.redis.zrangebyscore(this.k.articlesByTime, '-inf', `(${Date.parse(day)}`);
    let erased = 0;
    for (const id of ids) if ((await this.eraseArticle(this.k.counts, this.k.prefix, id, ERASED_LABEL)) === 2) erased++;
    return erased;
  }

  async eraseArticleText(id: string): Promise<boolean> {
    return (await this.eraseArticle(this.k.counts, this.k.prefix, id, ERASED_LABEL)) !== 0;
  }

  /**
   * Nothing to do in memory: erased fields are gone from Redis at once. Its persistence
   * files (RDB snapshots, the append-only file) keep old values until they are rewritten,
   * which the Redis operator schedules (BGSAVE, BGREWRITEAOF).
   */
  async compact(): Promise<void> {}
}
