/**
 * One lifecycle for the parts of a process: each part is started in order and pushed on a
 * stack; stopping pops them, the last started first, each once. A start that fails stops
 * what was started before it, so a process that cannot listen on its port (or reach its
 * store) leaves no connection, file or thread open behind the error.
 */
import { describeError } from '../errors.js';
import type { Logger } from '../logger.js';

/** One part of a running process. */
export interface Service {
  /** Short name for logs. */
  readonly name: string;
  /** Releases what the part holds; called once, after every part started after it has stopped. */
  stop(): Promise<void> | void;
}

/** The started parts of one process, stopped in reverse order. */
export class ServiceStack {
  private readonly started: Service[] = [];
  private stopping: Promise<void> | null = null;

  constructor(private readonly logger: Pick<Logger, 'error'>) {}

  /**
   * Runs `start` and keeps its result, to be stopped by `stop(result)` in turn; when `start`
   * throws, everything started before is stopped and the error goes on.
   */
  async add<T>(name: string, start: () => Promise<T> | T, stop: (value: T) => Promise<void> | void): Promise<T> {
    if (this.stopping) throw new Error(`cannot start ${name}: the process is stopping`);
    let value: T;
    try {
      value = await start();
    } catch (err) {
      await this.stop();
      throw err;
    }
    this.started.push({ name, stop: () => stop(value) });
    return value;
  }

  /** Stops every started part, the last started first; a part that fails to stop is logged and the rest still stop. */
  stop(): Promise<void> {
    this.stopping ??= (async () => {
      for (let s = this.started.pop(); s; s = this.started.pop()) {
        try {
          await s.stop();
        } catch (err) {
          this.logger.error({ err: describeError(err), part: s.name }, 'a part failed to stop');
        }
      }
    })();
    return this.stopping;
  }
}
