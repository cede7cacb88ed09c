/**
 * How a long-running command stops on SIGINT or SIGTERM: the first signal aborts `signal`,
 * so the command winds down and prints what it did so far; if it is still running
 * `graceMs` later (a store that does not answer, a receiver that hangs), or when a second
 * signal comes, the process ends at once with a line saying so. A command the signal
 * ended exits 128 + the signal's number (130 for SIGINT, 143 for SIGTERM), as shells do
 * (common practice), so a script can tell an interrupted run from a finished one.
 */

/** The stop request of one command. */
export interface StopRequest {
  /** Aborted at the first SIGINT or SIGTERM. */
  readonly signal: AbortSignal;
  /** Resolves at the first signal (a server's wait). */
  readonly requested: Promise<NodeJS.Signals>;
  /** The signal received, or null. */
  received(): NodeJS.Signals | null;
  /** The exit code of a run the signal ended (130, 143), or `otherwise` when none came. */
  exitCode(otherwise: number): number;
  /** Stops listening (the command finished by itself). */
  dispose(): void;
}

/** What the process does when the grace period runs out; injected by tests. */
export interface StopOptions {
  /** Time from the first signal to a forced exit, ms. Default 4,000: every command ends within 5 s, with a second to spare for the exit itself on a loaded machine. */
  graceMs?: number;
  write?: (line: string) => void;
  exit?: (code: number) => void;
  /** Where signals come from (the process). */
  source?: Pick<NodeJS.Process, 'on' | 'off'>;
}

const NUMBERS: Record<string, number> = { SIGINT: 2, SIGTERM: 15 };

/** Listens for SIGINT and SIGTERM on behalf of one command (`what` names it in messages). */
export function listenForStop(what: string, o: StopOptions = {}): StopRequest {
  const source = o.source ?? process;
  const write = o.write ?? ((line: string) => process.stderr.write(`${line}\n`));
  const exit = o.exit ?? ((code: number) => process.exit(code));
  const graceMs = o.graceMs ?? 4_000;
  const controller = new AbortController();
  let received: NodeJS.Signals | null = null;
  let timer: NodeJS.Timeout | null = null;
  let resolveRequested: (s: NodeJS.Signals) => void = () => undefined;
  const requested = new Promise<NodeJS.Signals>((r) => (resolveRequested = r));
  const code = (): number => 128 + (NUMBERS[received ?? 'SIGINT'] ?? 2);
  const onSignal = (sig: NodeJS.Signals): void => {
    if (received) {
      write(`strandline: ${sig} again; ${what} ends now`);
      exit(code());
      return;
    }
    received = sig;
    write(`strandline: ${sig}: stopping ${what} (again to end at once)`);
    timer = setTimeout(() => {
      write(`strandline: ${what} did not stop within ${(graceMs / 1000).toFixed(1)} s of ${sig}; ending now`);
      exit(code());
    }, graceMs);
    // Only a command still running after the grace period is ended: the timer keeps nothing alive.
    timer.unref();
    controller.abort();
    resolveRequested(sig);
  };
  source.on('SIGINT', onSignal);
  source.on('SIGTERM', onSignal);
  return {
    signal: controller.signal,
    requested,
    received: () => received,
    exitCode: (otherwise) => (received ? code() : otherwise),
    dispose() {
      source.off('SIGINT', onSignal);
      source.off('SIGTERM', onSignal);
      // The timer stays armed: a command that returned but whose process lingers is still ended.
    },
  };
}
