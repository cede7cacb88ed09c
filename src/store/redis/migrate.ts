/**
 * Data migrations of a Redis partition, the counterpart of the SQLite store's MIGRATIONS:
 * run when a store opens, each once and in order, the count done kept in the partition's
 * format key. Every step is safe to run twice, so processes opening at once need no lock.
 */
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';
import { defineScript } from './scripts.js';

/** Event ids per script call: each call is short, since Redis runs nothing else meanwhile. */
const BATCH = 200;

type Step = (redis: RedisClient, k: Keyspace) => Promise<void>;

/**
 * Linker states written before labels left them carry the label, a copy of a sentence, in
 * their header; the label lives with the event record alone, so erasing the sentence's text
 * can relabel it. The states are rewritten without it (lua/drop-state-labels.lua).
 */
const dropStateLabels: Step = async (redis, k) => {
  const run = defineScript(redis, 'drop-state-labels');
  const ids = await redis.zrange(k.events, '0', '-1');
  for (let at = 0; at < ids.length; at += BATCH) await run(k.counts, k.prefix, ...ids.slice(at, at + BATCH));
};

const STEPS: readonly Step[] = [dropStateLabels];

/** Brings the partition's data up to date; returns how many steps ran. */
export async function migratePartition(redis: RedisClient, k: Keyspace): Promise<number> {
  const done = Number((await redis.get(k.format)) ?? 0);
  for (let v = done; v < STEPS.length; v++) {
    await STEPS[v]!(redis, k);
    await redis.set(k.format, String(v + 1));
  }
  return Math.max(0, STEPS.length - done);
}
