/**
 * SQLite answers "busy" while another connection holds the write lock (the checkpoint
 * thread copying the log back, or another process on the same file) for longer than the
 * connection's busy timeout. That is a wait, never a reason to refuse an accepted article:
 * a write that meets it is run again (its transaction rolled back whole) after a growing
 * pause, for up to `giveUpMs`, and only then fails with the reason.
 */
import { StrandError } from '../../errors.js';
import type { Logger } from '../../logger.js';

/** Total time a write keeps trying while the file is busy, ms. */
export const BUSY_GIVE_UP_MS = 120_000;

/** True for SQLite's busy and locked answers (SQLITE_BUSY, SQLITE_BUSY_SNAPSHOT, SQLITE_LOCKED, ...). */
export function isBusy(err: unknown): boolean {
  return typeof (err as { code?: unknown })?.code === 'string' && /^SQLITE_(BUSY|LOCKED)/.test((err as { code: string }).code);
}

/**
 * Runs `write` until it is not refused as busy; other errors and a write still busy after
 * `giveUpMs` become STRAND_STORE_FAILED with `what` and the cause. `onWait` hears each retry.
 */
export async function whenFree<T>(
  what: string,
  write: () => T,
  o: { giveUpMs?: number; onWait?: (attempt: number, err: unknown) => void; sleep?: (ms: number) => Promise<void> } = {},
): Promise<T> {
  const giveUpMs = o.giveUpMs ?? BUSY_GIVE_UP_MS;
  const sleep = o.sleep ?? ((ms: number) => new Promise<void>((r) => setTimeout(r, ms)));
  const started = Date.now();
  for (let attempt = 1; ; attempt++) {
    try {
      return write();
    } catch (err) {
      if (!isBusy(err) || Date.now() - started >= giveUpMs) {
        const busy = isBusy(err) ? ` (busy for ${Math.round((Date.now() - started) / 1000)} s: another process holds the file?)` : '';
        throw new StrandError('STRAND_STORE_FAILED', `${what}: ${(err as Error).message}${busy}`, { cause: err });
      }
      o.onWait?.(attempt, err);
      await sleep(Math.min(2_000, 25 * 2 ** Math.min(attempt, 7)));
    }
  }
}

/** A write that waits while the file is busy (whenFree), as the store's parts run theirs. */
export type Write = <T>(what: string, fn: () => T) => Promise<T>;

/** Runs writes through whenFree, logging each wait to `log`. */
export function writeWhenFree(log?: Pick<Logger, 'warn'>): Write {
  return (what, fn) =>
    whenFree(what, fn, {
      onWait: (attempt, err) =>
        log?.warn(
          { attempt, code: (err as { code?: string }).code, err: (err as Error).message },
          'SQLite file busy; the write waits and goes again',
        ),
    });
}
