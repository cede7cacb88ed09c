/**
 * Runs the SQLite store's write-ahead-log checkpoints on a thread of their own. The main
 * connection turns SQLite's automatic checkpoint off only once the thread has opened the
 * database; if the thread cannot start or fails, the automatic checkpoint comes back on, so
 * the log never grows without bound.
 */
import { Worker } from 'node:worker_threads';
import type Database from 'better-sqlite3';
import type { Logger } from '../../logger.js';

/** How often the thread checkpoints, ms. */
const EVERY_MS = 500;
/** A log larger than this is checkpointed with RESTART, so the next commit starts it over. */
const RESTART_BYTES = 64 << 20;
/** SQLite's default automatic checkpoint, in log pages, restored when the thread is gone. */
const AUTO_PAGES = 1000;

/** A running checkpointer. */
export interface WalCheckpointer {
  /** Stops the thread; the caller closes its connection afterwards (SQLite checkpoints on the last close). */
  stop(): Promise<void>;
}

/** Starts checkpointing the database `db` has open at `path` (a file in WAL mode). */
export function startWalCheckpointer(db: Database.Database, path: string, log?: Pick<Logger, 'warn'>): WalCheckpointer {
  const worker = new Worker(new URL('./checkpoint-thread.mjs', import.meta.url), {
    workerData: { path, everyMs: EVERY_MS, restartBytes: RESTART_BYTES },
  });
  // The thread must not keep a finished command alive.
  worker.unref();
  let stopped = false;
  const fallBack = (why: string): void => {
    if (stopped) return;
    // Marked stopped even with the connection closed, so stop() never waits for an exit that happened.
    stopped = true;
    if (!db.open) return;
    db.pragma(`wal_autocheckpoint = ${AUTO_PAGES}`);
    log?.warn({ err: why }, 'SQLite checkpoint thread stopped; checkpointing on the main connection again');
  };
  worker.on('message', (m: { ready?: boolean; error?: string }) => {
    if (m.ready && !stopped && db.open) db.pragma('wal_autocheckpoint = 0');
    else if (m.error) log?.warn({ err: m.error }, 'SQLite checkpoint failed; retrying');
  });
  worker.on('error', (err) => fallBack(err.message));
  worker.on('exit', (code) => fallBack(`exit code ${code}`));
  return {
    async stop() {
      if (stopped) return;
      stopped = true;
      const exited = new Promise<void>((resolve) => worker.once('exit', () => resolve()));
      worker.postMessage('stop');
      // A thread stuck in a checkpoint (busy timeout) is ended rather than waited for.
      const timeout = setTimeout(() => void worker.terminate(), 6000);
      await exited;
      clearTimeout(timeout);
    },
  };
}
