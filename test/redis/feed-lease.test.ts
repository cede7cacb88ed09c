import { describe, expect, it } from 'vitest';
import { type FeedServer, startFeedServer } from '../../src/bench/feed-server.js';
import { Lease } from '../../src/distribute/lease.js';
import { createLogger } from '../../src/logger.js';
import { FeedPoller, feedId } from '../../src/poll/feed-poller.js';
import { connectRedis } from '../../src/store/redis/connect.js';
import { openRedisStore } from '../../src/store/redis/redis-store.js';
import { freshRedisStore, redisTestsRun } from '../helpers/redis.js';
import { testConfig } from '../helpers/runtime.js';
import { waitFor } from '../helpers/wait-for.js';

const REDIS_URL = 'redis://127.0.0.1:6379';
const silent = createLogger('silent');

describe.skipIf(!redisTestsRun())("api processes sharing one partition's feeds", () => {
  it("poll each feed once, through whichever holds the lease, and see each other's changes", async () => {
    const server: FeedServer = await startFeedServer(4, 3);
    const first = await freshRedisStore(REDIS_URL);
    const partition = first.keys.prefix.slice('{strandline:'.length, -1);
    const second = await openRedisStore({ url: REDIS_URL, partition });
    const [ra, rb] = await Promise.all([connectRedis(REDIS_URL), connectRedis(REDIS_URL)]);
    const leaseA = new Lease(ra, first.keys.pollLease, 'feed poller', silent, 3000);
    const leaseB = new Lease(rb, first.keys.pollLease, 'feed poller', silent, 3000);
    const limits = { ...testConfig().ingest, allowPrivateNetworks: true };
    const options = { ...testConfig().poll, intervalSeconds: 600 };
    const submitted: string[] = [];
    // How often each poller asked whether it may poll: the one without the lease must have
    // asked, and been told no, before "it did not poll" means anything.
    const asked = new Map<Lease, number>();
    const poller = (store: typeof first, lease: Lease) =>
      new FeedPoller({
        store,
        submit: async (a) => void submitted.push(...a.map((x) => x.id)),
        limits,
        options,
        logger: silent,
        refreshMs: 200,
        polls: () => (asked.set(lease, (asked.get(lease) ?? 0) + 1), lease.held),
      });
    const a = poller(first, leaseA);
    const b = poller(second, leaseB);
    const feeds = [0, 1, 2].map((i) => ({ url: server.url(`/feeds/${i}.xml`) }));
    const stored = async (i: number) => (await first.listFeeds()).find((f) => f.id === feedId(server.url(`/feeds/${i}.xml`)));
    try {
      await leaseA.start();
      await leaseB.start();
      expect([leaseA.held, leaseB.held]).toEqual([true, false]);
      // Both start with the same configuration, as two api processes would.
      await a.load(feeds);
      await b.load(feeds);
      a.start();
      b.start();
      await waitFor('the three feeds polled', async () => (await first.listFeeds()).every((f) => f.state.requests === 1), 8000);
      const askedBefore = asked.get(leaseB) ?? 0;
      await waitFor('the poller without the lease to ask again three times', () => (asked.get(leaseB) ?? 0) >= askedBefore + 3, 8000);
      expect(server.counts().requests).toBe(3);
      expect(submitted).toHaveLength(9);

      // A change served by the process that does not poll reaches the stored feed and the poller.
      await b.update(feedId(server.url('/feeds/0.xml')), { paused: true });
      await waitFor('the poller to see the pause', () => a.get(feedId(server.url('/feeds/0.xml')))?.paused === true, 8000);
      expect((await stored(0))!.state.requests).toBe(1);
      // A feed added there is polled by the lease holder.
      await b.add({ url: server.url('/feeds/3.xml') });
      await waitFor('the added feed polled', async () => (await stored(3))?.state.requests === 1, 8000);
      expect(server.counts().requests).toBe(4);

      // The holder goes: the other takes the lease over.
      await a.stop();
      await leaseA.stop();
      await waitFor('the lease to pass on', () => leaseB.held, 8000);
    } finally {
      await a.stop();
      await b.stop();
      await leaseA.stop();
      await leaseB.stop();
      ra.disconnect();
      rb.disconnect();
      await second.close();
      await first.close();
      await server.close();
    }
  });
});
