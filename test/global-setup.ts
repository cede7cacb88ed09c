/**
 * Gives the run a scratch folder of its own and probes Redis once for the whole run.
 *
 * Scratch: TMPDIR points into one folder for the run (test processes, and the CLI and
 * worker processes the tests start, inherit it), removed when the run ends, so the files
 * and private Redis data the tests make do not pile up in the system's temporary folder.
 *
 * Redis: Without STRANDLINE_REQUIRE_REDIS=1 and without a
 * reachable Redis, the Redis tests are skipped with one loud line; with it (CI), they run
 * and fail.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { Socket } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
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

export default async function setup(project: TestProject): Promise<() => void> {
  const scratch = mkdtempSync(join(tmpdir(), 'strandline-tests-'));
  const systemTmp = process.env.TMPDIR;
  process.env.TMPDIR = scratch;
  const available = await ping('127.0.0.1', 6379, 1000);
  if (!available && process.env.STRANDLINE_REQUIRE_REDIS !== '1') {
    process.stderr.write(
      '\n*** REDIS NOT REACHABLE at 127.0.0.1:6379: the Redis tests are SKIPPED (set STRANDLINE_REQUIRE_REDIS=1 to make them fail instead) ***\n\n',
    );
  }
  project.provide('redisAvailable', available);
  return () => {
    if (systemTmp === undefined) delete process.env.TMPDIR;
    else process.env.TMPDIR = systemTmp;
    rmSync(scratch, { recursive: true, force: true });
  };
}
