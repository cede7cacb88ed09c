/** Helpers for the tests that need Redis. */
import { spawn, spawnSync } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createServer } from 'node:net';
import { inject } from 'vitest';
import { type RedisStore, openRedisStore } from '../../src/store/redis/redis-store.js';

/** Redis tests run when Redis answers, or always under STRANDLINE_REQUIRE_REDIS=1 (CI). */
export function redisTestsRun(): boolean {
  return inject('redisAvailable') || process.env.STRANDLINE_REQUIRE_REDIS === '1';
}

/** A free TCP port on 127.0.0.1 (for a redis-server a test starts). */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address() as { port: number };
      srv.close(() => resolve(port));
    });
  });
}

/** A store on a fresh partition of its own, dropped when closed. */
export async function freshRedisStore(url: string, cluster = false): Promise<RedisStore> {
  const store = await openRedisStore({ url, cluster, partition: `test-${randomUUID()}` });
  const close = store.close.bind(store);
  store.close = async () => {
    await store.dropPartition();
    await close();
  };
  return store;
}

/** A redis-server of the test's own, with the append-only file on, that it can restart or stop (stop is idempotent). */
export async function startPrivateRedis(): Promise<{
  url: string;
  restarts: number;
  restart(downMs?: number): Promise<void>;
  stop(): Promise<void>;
}> {
  const dir = mkdtempSync(join(tmpdir(), 'strandline-redis-'));
  const port = await freePort();
  const args = [
    '--port',
    String(port),
    '--bind',
    '127.0.0.1',
    '--dir',
    dir,
    '--appendonly',
    'yes',
    '--save',
    '',
    '--logfile',
    join(dir, 'redis.log'),
  ];
  let proc = spawn('redis-server', args, { stdio: 'ignore' });
  let alive = true;
  const up = async () => {
    for (let i = 0; i < 100; i++) {
      if (spawnSync('redis-cli', ['-p', String(port), 'ping'], { encoding: 'utf8' }).stdout.includes('PONG')) return;
      await new Promise((r) => setTimeout(r, 100));
    }
    throw new Error(`private redis-server on ${port} did not start`);
  };
  const down = async () => {
    if (!alive) return;
    alive = false;
    const exited = new Promise((r) => proc.once('exit', r));
    spawnSync('redis-cli', ['-p', String(port), 'shutdown']);
    await exited;
  };
  await up();
  const handle = {
    url: `redis://127.0.0.1:${port}`,
    restarts: 0,
    async restart(downMs = 0) {
      await down();
      await new Promise((r) => setTimeout(r, downMs));
      proc = spawn('redis-server', args, { stdio: 'ignore' });
      alive = true;
      await up();
      handle.restarts++;
    },
    stop: down,
  };
  return handle;
}
