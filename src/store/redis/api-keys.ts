/** The Redis store's API keys: one JSON document each (the key's hash, never the key) in a hash, their order in a sorted set. */
import type { ApiKey, ApiKeys } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';

export class RedisApiKeys implements ApiKeys {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
  ) {}

  async listApiKeys(): Promise<ApiKey[]> {
    const ids = await this.redis.zrange(this.k.apiKeyOrder, '0', '-1');
    const data = ids.length ? await this.redis.hmget(this.k.apiKeys, ...ids) : [];
    return data.filter((d): d is string => d !== null).map((d) => JSON.parse(d) as ApiKey);
  }

  async addApiKey(key: ApiKey): Promise<void> {
    await this.redis
      .multi()
      .hset(this.k.apiKeys, key.id, JSON.stringify(key))
      .zadd(this.k.apiKeyOrder, String(Date.parse(key.created) || 0), key.id)
      .exec();
  }

  async deleteApiKey(id: string): Promise<boolean> {
    const [[, removed]] = (await this.redis.multi().hdel(this.k.apiKeys, id).zrem(this.k.apiKeyOrder, id).exec())! as [
      [Error | null, number],
    ];
    return removed === 1;
  }
}
