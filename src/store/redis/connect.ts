/**
 * Connections to Redis: one server (a redis:// URL) or a Redis Cluster (the URL names one
 * seed node; the client learns the others). A partition's keys share one hash slot, so
 * every script and pipeline of the store runs on one node either way.
 */
import { Cluster, Redis, type RedisOptions } from 'ioredis';
import { StrandError } from '../../errors.js';

/** A connection to one server or to a cluster. */
export type RedisClient = Redis | Cluster;

/** Where Redis is. */
export interface RedisTarget {
  url: string;
  /** The URL is a seed node of a Redis Cluster. */
  cluster?: boolean;
}

/**
 * One connection, checked with a PING (STRAND_STORE_FAILED when Redis does not answer at
 * start). Once connected, commands wait through a Redis restart or failover instead of
 * failing (maxRetriesPerRequest null): a commit that waits is better than one that is lost,
 * and a commit repeated after a lost reply changes nothing.
 */
export async function connectRedis(target: RedisTarget | string, options: RedisOptions = {}, onError: (err: Error) => void = () => undefined): Promise<RedisClient> {
  const { url, cluster } = typeof target === 'string' ? { url: target, cluster: false } : target;
  let client: RedisClient;
  try {
    const base: RedisOptions = { lazyConnect: true, maxRetriesPerRequest: null, ...options };
    if (cluster) {
      const u = new URL(url);
      if (!/^rediss?:$/.test(u.protocol)) throw new Error('not a redis:// or rediss:// URL');
      client = new Cluster([{ host: u.hostname, port: Number(u.port || 6379) }], {
        lazyConnect: true,
        redisOptions: { ...base, ...(u.username ? { username: decodeURIComponent(u.username) } : {}), ...(u.password ? { password: decodeURIComponent(u.password) } : {}), ...(u.protocol === 'rediss:' ? { tls: {} } : {}) },
      });
    } else {
      client = new Redis(url, base);
    }
  } catch (err) {
    throw new StrandError('STRAND_CONFIG_INVALID', `store.redis.url "${redactUrl(url)}" is not a Redis URL: ${(err as Error).message}`, { cause: err });
  }
  // Connection errors while reconnecting are reported here (ioredis keeps reconnecting);
  // commands wait for the connection rather than fail.
  client.on('error', onError);
  try {
    await client.connect();
    await client.ping();
  } catch (err) {
    client.disconnect();
    throw new StrandError('STRAND_STORE_FAILED', `cannot reach Redis at ${redactUrl(url)}: ${(err as Error).message}`, { cause: err });
  }
  return client;
}

/** The URL without its password, for messages and logs. */
export function redactUrl(url: string): string {
  return url.replace(/\/\/([^:@/]*):[^@/]*@/, '//$1:***@');
}

/** Deletes every key matching `pattern` (on every primary of a cluster); returns how many. */
export async function deleteMatching(client: RedisClient, pattern: string): Promise<number> {
  const nodes: Redis[] = client instanceof Cluster ? client.nodes('master') : [client];
  let dropped = 0;
  for (const node of nodes) {
    let cursor = '0';
    do {
      const [next, keys] = await node.scan(cursor, 'MATCH', pattern, 'COUNT', 1000);
      cursor = next;
      // One UNLINK per key: on a cluster a multi-key command must stay in one slot.
      for (const key of keys) dropped += await client.unlink(key);
    } while (cursor !== '0');
  }
  return dropped;
}
