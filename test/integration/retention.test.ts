import { randomUUID } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import { createRuntime } from '../../src/runtime.js';
import { openRedisStore } from '../../src/store/redis/redis-store.js';
import { redisTestsRun } from '../helpers/redis.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

const subscriber = {
  name: 'desk',
  url: 'http://127.0.0.1:9/hook',
  secret: 'whsec_c3RyYW5kbGluZS1leGFtcGxlLXNlY3JldC1rZXk=',
  types: ['event.opened', 'event.outlet_added', 'event.merged', 'event.split'],
};

/** A runtime with a webhook subscriber on SQLite, or on a Redis partition of its own (dropped by `done`). */
async function runtimeOn(kind: 'sqlite' | 'redis') {
  const webhooks = { allowPrivateNetworks: true, subscribers: [subscriber] };
  if (kind === 'sqlite') return { rt: await testRuntime({ webhooks }), done: async () => undefined };
  const redis = { url: 'redis://127.0.0.1:6379', partition: `test-${randomUUID()}` };
  const rt = await createRuntime(testConfig({ webhooks, store: { kind: 'redis', redis } }), createLogger('silent'));
  return {
    rt,
    done: async () => {
      const s = await openRedisStore(redis);
      await s.dropPartition();
      await s.close();
    },
  };
}

describe.each([
  ['SQLite', 'sqlite' as const, true],
  ['Redis', 'redis' as const, redisTestsRun()],
])('erasing text while notifications keep flowing (%s)', (_name, kind, runs) => {
  it.skipIf(!runs)('leaves no erased sentence in any notification, queued before the erasure or after it', async () => {
    const { rt, done } = await runtimeOn(kind);
    const articles = (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles;
    const day = (a: (typeof articles)[number]) => (a.published ?? a.fetched).slice(0, 10);
    const days = articles.map(day).sort();
    const cutoff = days[Math.floor(days.length / 2)]!;
    const before = articles.filter((a) => day(a) < cutoff);
    const after = articles.filter((a) => day(a) >= cutoff);
    await runArticles(rt, before);
    const textsOf = async (list: typeof articles) =>
      (await Promise.all(list.map(async (a) => ((await rt.store.getArticle(a.id))?.sentences ?? []).map((s) => s.text ?? '')))).flat();
    const erasable = new Set((await textsOf(before)).filter((t) => t.length >= 40));
    expect(await rt.store.eraseTextBefore(cutoff)).toBe(before.length);
    // Later articles join events first reported (and labelled) by erased ones.
    await runArticles(rt, after);
    const kept = new Set(await textsOf(after));
    const erased = [...erasable].filter((t) => !kept.has(t));
    expect(erased.length).toBeGreaterThan(20);
    // Deliveries send the logged body as it stands when they go.
    const bodies = (await rt.store.notificationsAfter(0, 100_000)).items.map((n) => n.body);
    expect(bodies.length).toBeGreaterThan(50);
    const leftIn = (t: string) => bodies.filter((b) => b.includes(JSON.stringify(t).slice(1, -1)));
    expect(erased.filter((t) => leftIn(t).length > 0)).toEqual([]);
    await rt.close();
    await done();
  });
});
