/**
 * Probes Redis once for the whole run. Without STRANDLINE_REQUIRE_REDIS=1 and without a
 * reachable Redis, the Redis tests are skipped with one loud line; with it (CI), they run
 * and fail.
 */
import { Socket } from 'node:net';
import type { TestProject } from 'vitest/node';

declare module 'vitest' {
  export interface ProvidedContext {
    redisAvailable: boolean;
  }
}

function ping(host: string, port: number, timeoutMs: number): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = new Socket();
    const done = (ok: boolean): void => {
      socket.destroy();
      resolve(ok);
    };
    socket.setTimeout(timeoutMs, () => done(false));
    socket.once('error', () => done(false));
    socket.connect(port, host, () => socket.write('PING\r\n'));
    socket.once('data', (d) => done(d.toString().startsWith('+PONG')));
  });
}

export default async function setup(project: TestProject): Promise<void> {
  const available = await ping('127.0.0.1', 6379, 1000);
  if (!available && process.env.STRANDLINE_REQUIRE_REDIS !== '1') {
    process.stderr.write('\n*** REDIS NOT REACHABLE at 127.0.0.1:6379: the Redis tests are SKIPPED (set STRANDLINE_REQUIRE_REDIS=1 to make them fail instead) ***\n\n');
  }
  project.provide('redisAvailable', available);
}
