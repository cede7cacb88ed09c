/**
 * Waiting in tests for something to happen, rather than sleeping and hoping: `waitFor` polls
 * a condition and fails naming what it waited for; `recordingLogger` keeps what the code
 * logged, so a test can wait for the code to say it reached a point (it asked for a lease,
 * it noticed the lease gone) before asserting that something did not happen.
 */
import pino from 'pino';
import type { Logger } from '../../src/logger.js';

/** Resolves once `done()` holds; fails after `ms` naming `what`. */
export async function waitFor(what: string, done: () => boolean | Promise<boolean>, ms = 30_000, stepMs = 20): Promise<void> {
  const deadline = Date.now() + ms;
  while (!(await done())) {
    if (Date.now() > deadline) throw new Error(`gave up waiting for ${what} after ${ms} ms`);
    await new Promise((r) => setTimeout(r, stepMs));
  }
}

/** A logger at `level` whose lines are kept (parsed) in `lines`. */
export function recordingLogger(level = 'info'): { logger: Logger; lines: { msg: string; level: number }[]; said(text: string): boolean } {
  const lines: { msg: string; level: number }[] = [];
  const logger = pino({ level }, { write: (s: string) => void lines.push(JSON.parse(s) as { msg: string; level: number }) });
  return { logger, lines, said: (text) => lines.some((l) => l.msg.includes(text)) };
}
