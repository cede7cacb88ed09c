/**
 * Worker-thread pools (piscina) as Strandline starts them: the thread's module found beside
 * its pool (compiled, or TypeScript loaded through tsx when run from sources), a fixed
 * number of threads, and a start-up probe each thread answers, so that a broken thread
 * fails at start rather than on the first task.
 */
import { existsSync } from 'node:fs';
import { createRequire } from 'node:module';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { Piscina } from 'piscina';
import { type ErrorCode, StrandError } from './errors.js';

/** `name` without extension, resolved beside `callerUrl` (the caller's `import.meta.url`). */
export function threadFile(name: string, callerUrl: string): { filename: string; execArgv?: string[] } {
  const js = new URL(`./${name}.js`, callerUrl);
  if (existsSync(fileURLToPath(js))) return { filename: js.href };
  // tsx by its path: the working directory may be anywhere.
  const tsx = pathToFileURL(createRequire(callerUrl).resolve('tsx')).href;
  return { filename: new URL(`./${name}.ts`, callerUrl).href, execArgv: ['--import', tsx] };
}

/**
 * Starts `threads` threads of module `name` (beside `callerUrl`), whose default export
 * answers `null` (the probe), and resolves once every one has; refuses fewer than one
 * thread, and fails with `failCode` naming `what` when a thread does not start.
 */
export async function startThreadPool<Task, Answer>(
  name: string,
  callerUrl: string,
  threads: number,
  o: { what: string; failCode: ErrorCode; concurrentTasksPerWorker?: number },
): Promise<Piscina<Task | null, Answer | null>> {
  if (threads < 1) throw new StrandError('STRAND_CONFIG_INVALID', `${o.what} pool needs at least one thread, not ${threads}`);
  const pool = new Piscina<Task | null, Answer | null>({
    ...threadFile(name, callerUrl),
    minThreads: threads,
    maxThreads: threads,
    idleTimeout: Infinity,
    ...(o.concurrentTasksPerWorker ? { concurrentTasksPerWorker: o.concurrentTasksPerWorker } : {}),
  });
  try {
    await Promise.all(Array.from({ length: threads }, () => pool.run(null)));
  } catch (err) {
    await pool.close({ force: true });
    throw new StrandError(o.failCode, `${o.what} threads did not start: ${(err as Error).message}`, { cause: err });
  }
  return pool;
}
