/** Pipelined reads, and the member and record formats several parts of the Redis store read. */
import { StrandError } from '../../errors.js';
import type { MergeRecord } from '../store.js';
import type { RedisClient } from './connect.js';

/** Reads per pipeline round trip. */
const CHUNK = 500;

/** Runs `add` (one or more commands) for each item in pipelines of CHUNK items; returns every reply in order. */
export async function pipelined<T>(
  redis: RedisClient,
  items: readonly T[],
  add: (p: ReturnType<RedisClient['pipeline']>, item: T) => unknown,
): Promise<unknown[]> {
  const out: unknown[] = [];
  for (let at = 0; at < items.length; at += CHUNK) {
    const p = redis.pipeline();
    for (const item of items.slice(at, at + CHUNK)) add(p, item);
    for (const [err, reply] of (await p.exec())!) {
      if (err) throw new StrandError('STRAND_STORE_FAILED', `Redis read failed: ${err.message}`, { cause: err });
      out.push(reply);
    }
  }
  return out;
}

/** The two halves of a `<a>\n<b>` member. */
export function splitMember(m: string): [string, string] {
  const nl = m.indexOf('\n');
  return [m.slice(0, nl), m.slice(nl + 1)];
}

/** A merge record `<into>\n<score>\n<at>` of the event (or story) `from`. */
export function parseMerge(from: string, rec: string): MergeRecord {
  const [into, score, at] = rec.split('\n');
  return { from, into: into!, score: Number(score), at: at! };
}

/** Code-unit order of two strings (the order the stores list ids in). */
export function cmp(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}
