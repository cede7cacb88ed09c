/**
 * Runs the command line inside the test's process: the same command tree, options and exit
 * codes as `strandline`, with what it writes to stdout and stderr captured.
 */
import { runCli } from '../../src/cli/program.js';

/** How a command ended, as a process would report it. */
export interface CliRun {
  status: number;
  stdout: string;
  stderr: string;
}

type Write = typeof process.stdout.write;

function capture(stream: NodeJS.WriteStream, into: string[]): () => void {
  const original = stream.write;
  stream.write = ((chunk: string | Uint8Array, ...rest: unknown[]) => {
    into.push(typeof chunk === 'string' ? chunk : Buffer.from(chunk).toString('utf8'));
    const done = rest.find((r): r is () => void => typeof r === 'function');
    if (done) queueMicrotask(done);
    return true;
  }) as Write;
  return () => {
    stream.write = original;
  };
}

/** Runs `strandline ...args` in process; resolves once the command has finished. */
export async function cli(...args: string[]): Promise<CliRun> {
  const out: string[] = [];
  const err: string[] = [];
  const restore = [capture(process.stdout, out), capture(process.stderr, err)];
  try {
    const status = await runCli(args);
    return { status, stdout: out.join(''), stderr: err.join('') };
  } finally {
    for (const r of restore) r();
  }
}
