/**
 * Connections to Redis: one server (a redis:// URL) or a Redis Cluster (the URL names one
 * seed node; the client learns the others). A partition's keys share one hash slot, so
 * every script and pipeline of the store runs on one node either way.
 */
import { Cluster, Redis, type RedisOptions } from 'ioredis';
import { StrandError } from '../../errors.js';

/** A connection to one server or to a cluster. */
export type RedisClient = Redis | Cluster;

/**
 * Options for a connection that answers at once while Redis is away instead of waiting
 * for it (the API: a client should hear 503 now, not hang): no offline queue, nothing
 * resent after a reconnect (a push the client was told failed is never stored later), and
 * a command that gets no answer fails after `commandTimeout`.
 */
export const FAIL_FAST: RedisOptions = {
  enableOfflineQueue: false,
  autoResendUnfulfilledCommands: false,
  commandTimeout: 5000,
  maxRetriesPerRequest: 0,
};

/** True for an error that says Redis cannot be reached now (closed, refused, reset, timed out, not writeable). */
export function isConnectionError(err: unknown): boolean {
  const message = err instanceof Error ? err.message : String(err);
  return /Connection is closed|Stream isn't writeable|ECONNREFUSED|ECONNRESET|EPIPE|ETIMEDOUT|Command timed out|Reached the max retries|Cluster(All)?FailedError|None of startup nodes is available/i.test(
    message,
  );
}

/** True while the connection is up and serving commands. */
export function isReady(client: RedisClient): boolean {
  return client.status === 'ready';
}

/**
 * Closes a connection without waiting on a Redis that is gone: QUIT (which lets commands
 * in flight finish) only while connected, for at most a second; otherwise the socket is
 * dropped at once. A shutdown therefore never hangs on an unreachable Redis.
 */
export async function closeClient(client: RedisClient): Promise<void> {
  if (client.status === 'end') return;
  if (!isReady(client)) return void client.disconnect();
  let timer: NodeJS.Timeout | undefined;
  const late = new Promise<void>((resolve) => {
    timer = setTimeout(resolve, 1000);
  });
  await Promise.race([client.quit().catch(() => undefined), late]);
  clearTimeout(timer);
  if ((client.status as string) !== 'end') client.disconnect();
}

/** How long a cluster may take at start to serve every slot. */
const CLUSTER_START_MS = 30_000;

/** Where Redis is. */
export interface RedisTarget {
  url: string;
  /** The URL is a seed node of a Redis Cluster. */
  cluster?: boolean;
  /** How long a cluster may take at start to serve every slot (default 30 s). */
  startTimeoutMs?: number;
}

/**
 * One connection, checked with a PING (STRAND_STORE_FAILED when Redis does not answer at
 * start). Once connected, commands wait through a Redis restart or failover instead of
 * failing (maxRetriesPerRequest null): a commit that waits is better than one that is lost,
 * and a commit repeated after a lost reply changes nothing.
 */
export async function connectRedis(
  target: RedisTarget | string,
  options: RedisOptions = {},
  onError: (err: Error) => void = () => undefined,
): Promise<RedisClient> {
  const { url, cluster, startTimeoutMs = CLUSTER_START_MS } = typeof target === 'string' ? { url: target, cluster: false } : target;
  let client: RedisClient;
  try {
    const base: RedisOptions = { lazyConnect: true, maxRetriesPerRequest: null, ...options };
    if (cluster) {
      const u = new URL(url);
      if (!/^rediss?:$/.test(u.protocol)) throw new Error('not a redis:// or rediss:// URL');
      client = new Cluster([{ host: u.hostname, port: Number(u.port || 6379) }], {
        lazyConnect: true,
        ...(options.enableOfflineQueue === false ? { enableOfflineQueue: false } : {}),
        redisOptions: {
          ...base,
          ...(u.username ? { username: decodeURIComponent(u.username) } : {}),
          ...(u.password ? { password: decodeURIComponent(u.password) } : {}),
          ...(u.protocol === 'rediss:' ? { tls: {} } : {}),
        },
      });
    } else {
      client = new Redis(url, base);
    }
  } catch (err) {
    throw new StrandError('STRAND_CONFIG_INVALID', `store.redis.url "${redactUrl(url)}" is not a Redis URL: ${(err as Error).message}`, {
      cause: err,
    });
  }
  // Connection errors while reconnecting are reported here (ioredis keeps reconnecting);
  // commands wait for the connection rather than fail.
  client.on('error', onError);
  // A cluster client keeps asking for the slot map until the cluster serves every slot, so
  // a cluster that never gets there would hold the start for good: it gets a deadline.
  let deadline: NodeJS.Timeout | undefined;
  try {
    const connected = client.connect().then(() => client.ping());
    // Past the deadline the client is disconnected: its own failure then has no one to tell.
    connected.catch(() => undefined);
    await (cluster
      ? Promise.race([
          connected,
          new Promise((_, reject) => {
            deadline = setTimeout(() => reject(new Error(`the cluster was not ready within ${startTimeoutMs / 1000} s`)), startTimeoutMs);
          }),
        ])
      : connected);
  } catch (err) {
    client.disconnect();
    throw new StrandError('STRAND_STORE_FAILED', `cannot reach Redis at ${redactUrl(url)}: ${(err as Error).message}`, { cause: err });
  } finally {
    clearTimeout(deadline);
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
