/**
 * SIGINT and SIGTERM end every long-running command within 5 s, with what it did so far.
 * These start real processes: a signal's delivery, the exit code and the process actually
 * ending are the behaviour under test, which no in-process call can show.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, runAndStop } from '../helpers/cli-process.js';

describe.concurrent('SIGINT and SIGTERM end every long-running command within 5 s, with a summary', () => {
  let slow: Server;
  let slowUrl: string;
  beforeAll(async () => {
    // A feed server that accepts and never answers.
    slow = createServer(() => undefined);
    await new Promise<void>((r) => slow.listen(0, '127.0.0.1', r));
    slowUrl = `http://127.0.0.1:${(slow.address() as AddressInfo).port}/feed.xml`;
  });
  afterAll(
    () =>
      new Promise((r) => {
        slow.closeAllConnections();
        slow.close(r);
      }),
  );

  it('replay --pace, SIGINT: stops storing, prints how far it got, exits 130', async () => {
    const r = await runAndStop(
      ['replay', join(ROOT, 'demo-feed/feeds'), '--pace', '150', '--db', 'x.sqlite', '--no-progress'],
      /running 101 article/,
      'SIGINT',
    );
    expect(r.code, r.stderr).toBe(130);
    expect(r.stopMs).toBeLessThan(5000);
    expect(r.stdout).toMatch(/stored\s+\d+ article/);
    expect(r.stdout).toMatch(/stopped\s+early: \d+ of 101 article\(s\) not run; the same command again continues where it stopped/);
  });

  it('replay --pace, SIGTERM: the same, exits 143', async () => {
    const r = await runAndStop(
      ['replay', join(ROOT, 'demo-feed/feeds'), '--pace', '150', '--db', 'x.sqlite', '--json'],
      /running 101 article/,
      'SIGTERM',
    );
    expect(r.code, r.stderr).toBe(143);
    expect(r.stopMs).toBeLessThan(5000);
    expect(JSON.parse(r.stdout).notRun).toBeGreaterThan(0);
  });

  it('ingest of a feed that never answers, SIGINT: abandons the fetch and says so', async () => {
    const config = join(mkdtempSync(join(tmpdir(), 'strandline-stop-')), 'config.json');
    writeFileSync(config, JSON.stringify({ ingest: { allowedNetworks: ['127.0.0.1'] } }));
    const r = await runAndStop(['ingest', slowUrl, '--db', 'x.sqlite', '--config', config], /reading 1 source/, 'SIGINT');
    expect(r.code, r.stderr).toBe(130);
    expect(r.stopMs).toBeLessThan(5000);
    expect(r.stdout).toMatch(/fetch abandoned \(stopping\)/);
  });

  it('serve --demo during its replay, SIGTERM: stops the replay and the server', async () => {
    const r = await runAndStop(['serve', '--demo', '--port', '0', '--db', 'demo.sqlite'], /Replaying/, 'SIGTERM');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stopMs).toBeLessThan(5000);
    expect(r.stdout).toMatch(/stopping…\n[\s\S]*stopped\n$/);
  });

  it('eval --demo, SIGINT: no half-written report, exits 130', async () => {
    const r = await runAndStop(['eval', '--demo', '--setting', 'gold', '--out', 'report'], /evaluating/, 'SIGINT');
    expect(r.code, r.stderr).toBe(130);
    expect(r.stopMs).toBeLessThan(5000);
    expect(r.stdout).toMatch(/evaluation stopped by SIGINT: no report written/);
  });
});
