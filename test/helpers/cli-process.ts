/**
 * Runs the command line in a process of its own and stops it with a signal: for the tests
 * whose behaviour is the signal's delivery, the exit code and the process really ending.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

/** The repository root. */
export const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const TSX = pathToFileURL(join(ROOT, 'node_modules/tsx/dist/loader.mjs')).href;

/** How a stopped command ended. */
export interface Ended {
  code: number | null;
  signal: NodeJS.Signals | null;
  stdout: string;
  stderr: string;
  /** From the signal to the process's exit, ms. */
  stopMs: number;
}

/** Starts the command, sends `sig` once `ready` shows on stdout or stderr (after `before`), and waits for the exit. */
export function runAndStop(
  args: string[],
  ready: RegExp,
  sig: NodeJS.Signals,
  env: Record<string, string> = {},
  before: () => Promise<void> = async () => undefined,
): Promise<Ended> {
  // Each run in a folder of its own (its store, its report), so tsx is named by its path.
  const proc: ChildProcess = spawn(process.execPath, ['--import', TSX, join(ROOT, 'src/cli/main.ts'), ...args], {
    cwd: mkdtempSync(join(tmpdir(), 'strandline-stop-')),
    env: { ...process.env, STRANDLINE_LOG_LEVEL: 'warn', ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let stdout = '';
  let stderr = '';
  let sentAt = 0;
  const send = (): void => {
    if (sentAt || !ready.test(stdout + stderr)) return;
    // A moment in, so the command is well into its work.
    setTimeout(
      () =>
        void before().then(() => {
          sentAt = Date.now();
          proc.kill(sig);
        }),
      400,
    );
    sentAt = -1;
  };
  proc.stdout!.on('data', (d: Buffer) => {
    stdout += d;
    send();
  });
  proc.stderr!.on('data', (d: Buffer) => {
    stderr += d;
    send();
  });
  return new Promise((resolve, reject) => {
    const guard = setTimeout(() => {
      proc.kill('SIGKILL');
      reject(new Error(`no exit: ${args.join(' ')}\n${stdout}\n${stderr}`));
    }, 60_000);
    proc.on('exit', (code, signal) => {
      clearTimeout(guard);
      resolve({ code, signal, stdout, stderr, stopMs: Date.now() - sentAt });
    });
  });
}
