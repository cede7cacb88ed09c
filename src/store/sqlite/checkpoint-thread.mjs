// The SQLite store's checkpointer thread (started by wal-checkpointer.ts): copies the
// write-ahead log back into the database file on its own connection, so that checkpoint
// writes and syncs never stall the pipeline's commits. Plain JavaScript, so the same file
// runs from the sources and from dist/ (a worker thread's entry file is not compiled by tsx).
import { parentPort, workerData } from 'node:worker_threads';
import Database from 'better-sqlite3';

/** @type {{ path: string, everyMs: number, restartBytes: number }} */
const { path, everyMs, restartBytes } = workerData;
const db = new Database(path, { fileMustExist: true });
// Short: a RESTART checkpoint holds the write lock while it waits for readers, so it gives
// up soon (and tries again at the next tick) rather than keep the pipeline's commits waiting.
db.pragma('busy_timeout = 100');
const pageSize = db.pragma('page_size', { simple: true });
// Past restartBytes of log, one checkpoint waits for the writer (RESTART) so the log starts over.
let restart = false;

const timer = setInterval(() => {
  try {
    const [result] = db.pragma(`wal_checkpoint(${restart ? 'RESTART' : 'PASSIVE'})`);
    restart = (result?.log ?? 0) * pageSize > restartBytes;
  } catch (err) {
    parentPort?.postMessage({ error: err instanceof Error ? err.message : String(err) });
  }
}, everyMs);

parentPort?.on('message', (message) => {
  if (message !== 'stop') return;
  clearInterval(timer);
  db.close();
  parentPort?.close();
});
parentPort?.postMessage({ ready: true });
