import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const run = (...args: string[]) => spawnSync(process.execPath, ['--import', 'tsx', join(ROOT, 'src/cli/main.ts'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 });

describe('the command line', () => {
  it.each([
    ['serve', /--demo/],
    ['replay', /--pace <ms>/],
    ['ingest', /feed URLs or files/],
    ['forget', /--before <day>/],
  ])('explains %s with --help', (command, option) => {
    const r = run(command, '--help');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(option);
    expect(r.stdout).toMatch(/--config <file>/);
  });

  it('lists the commands', () => {
    expect(run('--help').stdout).toMatch(/serve[\s\S]*replay[\s\S]*ingest[\s\S]*forget/);
  });

  it.each([
    [['replay'], /missing required argument/],
    [['replay', 'x', '--pace', '-5'], /--pace must be a whole number/],
    [['serve', '--port', '99999'], /--port must be a whole number from 0 to 65535/],
    [['launch'], /unknown command/],
    [['forget'], /give --article <id> or --before/],
    [['forget', '--before', 'last week'], /--before must be a day/],
  ])('refuses %j with a clear message and a non-zero exit', (args, message) => {
    const r = run(...args);
    expect(r.status).not.toBe(0);
    expect(r.stderr).toMatch(message);
  });

  it('refuses an invalid configuration file before doing anything', () => {
    const r = run('replay', 'demo-feed/feeds', '--config', join(ROOT, 'package.json'));
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/STRAND_CONFIG_INVALID: invalid configuration/);
  });
});
