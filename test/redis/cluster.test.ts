import { type ChildProcess, spawn, spawnSync } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/load-config.js';
import { enqueueArticles } from '../../src/distribute/intake.js';
import { startLinker, startWorker } from '../../src/distribute/roles.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import type { ArticleOutcome } from '../../src/pipeline/index.js';
import { connectRedis } from '../../src/store/redis/connect.js';
import { keyspace } from '../../src/store/redis/keys.js';
import { openRedisStore, type RedisStore } from '../../src/store/redis/redis-store.js';
import { describeStoreContract } from '../contract/store-contract.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { freePort, freshRedisStore, redisTestsRun } from '../helpers/redis.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

// A local three-node Redis Cluster started by the test itself (redis-server and redis-cli
// are installed wherever the Redis tests run; .ci/run installs them).
const run = redisTestsRun();

interface LocalCluster {
  url: string;
  stop(): Promise<void>;
}

async function startCluster(): Promise<LocalCluster> {
  const dir = mkdtempSync(join(tmpdir(), 'strandline-cluster-'));
  const ports = [await freePort(), await freePort(), await freePort()];
  const procs: ChildProcess[] = ports.map((port) =>
    spawn(
      'redis-server',
      [
        '--port',
        String(port),
        '--bind',
        '127.0.0.1',
        '--dir',
        dir,
        '--cluster-enabled',
        'yes',
        '--cluster-config-file',
        `nodes-${port}.conf`,
        '--save',
        '',
        '--appendonly',
        'no',
        '--logfile',
        join(dir, `redis-${port}.log`),
      ],
      { stdio: 'ignore' },
    ),
  );
  const cli = (...args: string[]) => spawnSync('redis-cli', args, { encoding: 'utf8', timeout: 30_000 });
  for (const port of ports) {
    for (let i = 0; i < 100 && !cli('-p', String(port), 'ping').stdout.includes('PONG'); i++) await new Promise((r) => setTimeout(r, 100));
  }
  const created = cli('--cluster', 'create', ...ports.map((p) => `127.0.0.1:${p}`), '--cluster-replicas', '0', '--cluster-yes');
  if (created.status !== 0) throw new Error(`cluster create failed: ${created.stdout}${created.stderr}`);
  // Ready when every node says the cluster is ok and knows all three nodes with every slot
  // served: node 0 alone can say ok before the others have the slot map, and a client that
  // asks one of those then waits for good.
  const ready = (port: number) => {
    const info = cli('-p', String(port), 'cluster', 'info').stdout;
    return info.includes('cluster_state:ok') && info.includes('cluster_known_nodes:3') && info.includes('cluster_slots_ok:16384');
  };
  for (let i = 0; i < 300 && !ports.every(ready); i++) await new Promise((r) => setTimeout(r, 100));
  if (!ports.every(ready)) throw new Error(`the local cluster on ports ${ports.join(', ')} did not become ready in 30 s`);
  return {
    url: `redis://127.0.0.1:${ports[0]}`,
    async stop() {
      await Promise.all(
        procs.map(
          (p) =>
            new Promise((r) => {
              p.once('exit', r);
              p.kill('SIGTERM');
            }),
        ),
      );
    },
  };
}

describe.skipIf(!run)('the Redis store on a three-node Redis Cluster', () => {
  let cluster: LocalCluster;
  beforeAll(async () => {
    cluster = await startCluster();
  }, 60_000);
  afterAll(async () => {
    await cluster?.stop();
  });

  describeStoreContract('Redis Cluster store', () => freshRedisStore(cluster.url, true));

  it('gives up at start with a clear error when the cluster never serves its slots', async () => {
    const port = await freePort();
    const dir = mkdtempSync(join(tmpdir(), 'strandline-cluster-'));
    const node = spawn(
      'redis-server',
      ['--port', String(port), '--bind', '127.0.0.1', '--dir', dir, '--cluster-enabled', 'yes', '--save', '', '--appendonly', 'no'],
      { stdio: 'ignore' },
    );
    try {
      for (let i = 0; i < 100 && !spawnSync('redis-cli', ['-p', String(port), 'ping'], { encoding: 'utf8' }).stdout.includes('PONG'); i++)
        await new Promise((r) => setTimeout(r, 100));
      // A node in cluster mode with no slots assigned: a cluster client would wait for good.
      await expect(connectRedis({ url: `redis://127.0.0.1:${port}`, cluster: true, startTimeoutMs: 1000 })).rejects.toMatchObject({
        code: 'STRAND_STORE_FAILED',
        message: expect.stringMatching(/not ready within 1 s/),
      });
    } finally {
      await new Promise((r) => {
        node.once('exit', r);
        node.kill('SIGTERM');
      });
    }
  });

  it('keeps each partition in one hash slot, so partitions spread over the shards', async () => {
    const client = await connectRedis({ url: cluster.url, cluster: true });
    try {
      const slots = new Set<number>();
      for (let i = 0; i < 12; i++) {
        const k = keyspace(`desk-${i}`);
        const own = await Promise.all(
          [k.counts, k.intake, k.article('https://x.example/a?b={c}'), k.event('ev_1')].map(
            (key) => client.call('CLUSTER', 'KEYSLOT', key) as Promise<number>,
          ),
        );
        expect(new Set(own).size).toBe(1);
        slots.add(own[0]!);
      }
      expect(slots.size).toBeGreaterThan(1);
    } finally {
      client.disconnect();
    }
  });

  it('runs a worker and the linker over the cluster with the same result as one process', async () => {
    const articles = (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
    const rt = await testRuntime();
    await runArticles(rt, articles);
    const reference = await rt.store.counts();
    await rt.close();
    const partition = `test-${randomUUID()}`;
    const config = parseConfig({
      store: { kind: 'redis', redis: { url: cluster.url, cluster: true, partition } },
      queue: { blockMs: 100 },
      analysis: { threads: 0 },
      log: { level: 'silent' },
    });
    const worker = await startWorker(config, createLogger('silent'));
    const linking = await startLinker(config, createLogger('silent'));
    const outcomes: ArticleOutcome[] = [];
    linking.linker.outcome$.subscribe((o) => outcomes.push(o));
    const client = await connectRedis({ url: cluster.url, cluster: true });
    const store: RedisStore = await openRedisStore({ url: cluster.url, cluster: true, partition });
    try {
      await enqueueArticles(client, keyspace(partition), articles);
      const end = Date.now() + 60_000;
      while (outcomes.length < articles.length && Date.now() < end) await new Promise((r) => setTimeout(r, 50));
      expect(outcomes.filter((o) => o.status === 'rejected')).toEqual([]);
      expect(await store.counts()).toEqual(reference);
    } finally {
      await worker.stop();
      await linking.stop();
      await store.dropPartition();
      await store.close();
      client.disconnect();
    }
  }, 120_000);
});
