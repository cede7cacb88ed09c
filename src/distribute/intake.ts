/**
 * The intake stream: where articles wait for a worker. Any process may add to it (the API
 * role replaying feeds, a push endpoint); workers read it through the consumer group
 * `workers`; the linker reads its order.
 */
import type { QueueDeadLetter } from '../status.js';
import type { RedisClient } from '../store/redis/connect.js';
import type { Article } from '../records.js';
import type { Keyspace } from '../store/redis/keys.js';
import { encodeArticle } from './wire.js';

/** The consumer group of the worker processes. */
export const WORKER_GROUP = 'workers';

/** Creates the stream and the workers' group if missing (idempotent). */
export async function ensureIntake(redis: RedisClient, k: Keyspace): Promise<void> {
  try {
    await redis.xgroup('CREATE', k.intake, WORKER_GROUP, '0', 'MKSTREAM');
  } catch (err) {
    if (!/BUSYGROUP/.test((err as Error).message)) throw err;
  }
}

/**
 * Adds articles to the intake stream, in order; returns their entry ids. Sent in chunks of
 * 200, or, with `atomic` (a push, whose client must be told all or nothing), as one
 * MULTI/EXEC transaction.
 */
export async function enqueueArticles(
  redis: RedisClient,
  k: Keyspace,
  articles: readonly Article[],
  o: { atomic?: boolean } = {},
): Promise<string[]> {
  await ensureIntake(redis, k);
  const ids: string[] = [];
  const chunk = o.atomic ? Math.max(1, articles.length) : 200;
  for (let at = 0; at < articles.length; at += chunk) {
    const p = o.atomic ? redis.multi() : redis.pipeline();
    for (const a of articles.slice(at, at + chunk)) p.xadd(k.intake, '*', 'article', encodeArticle(a));
    for (const [err, id] of (await p.exec())!) {
      if (err) throw err;
      ids.push(id as string);
    }
  }
  return ids;
}

/** What waits where: intake entries not yet answered, analysed entries not yet linked, dead letters. */
export async function queueDepth(redis: RedisClient, k: Keyspace): Promise<{ intake: number; analysed: number; deadLetters: number }> {
  const [intake, analysed, dead] = await Promise.all([redis.xlen(k.intake), redis.xlen(k.analysed), redis.xlen(k.deadLetters)]);
  return { intake, analysed, deadLetters: dead };
}

/** The newest dead letters (intake entries given up after repeated failures) first. */
export async function deadLetters(redis: RedisClient, k: Keyspace, limit: number): Promise<QueueDeadLetter[]> {
  const rows = await redis.xrevrange(k.deadLetters, '+', '-', 'COUNT', limit);
  return rows.map(([id, fields]) => {
    const f = fieldMap(fields);
    return { id, entry: f.entry ?? '', error: f.error ?? '', article: (f.article ?? '').slice(0, 2000) };
  });
}

/** A stream entry's flat field list as an object. */
export function fieldMap(fields: readonly string[]): Record<string, string> {
  const out: Record<string, string> = {};
  for (let i = 0; i + 1 < fields.length; i += 2) out[fields[i]!] = fields[i + 1]!;
  return out;
}
