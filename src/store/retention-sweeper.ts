/**
 * Applies `retention.textDays`: every hour, erases the stored text of articles published
 * more than that many days ago, and compacts the store (`Store.compact`, so the erased text
 * leaves the disk as well) once a day at most, at the first sweep that erased something
 * after the last compaction. Compaction rewrites the whole SQLite file, so it is not run
 * after every hourly erasure.
 */
import type { Logger } from '../logger.js';
import { addDays, dayOf } from '../text/days.js';
import type { Store } from './store.js';

/** What the sweeper needs. */
export interface RetentionSweeperDeps {
  store: Pick<Store, 'eraseTextBefore' | 'compact'>;
  /** Days of text to keep; null keeps everything (the sweeper then does nothing). */
  textDays: number | null;
  logger: Pick<Logger, 'info' | 'error'>;
  /** The clock (tests). */
  now?: () => Date;
  sweepEveryMs?: number;
  compactEveryMs?: number;
}

/** What one sweep did. */
export interface SweepResult {
  erased: number;
  compacted: boolean;
}

const HOUR_MS = 60 * 60_000;

/** Erases old text on a schedule and compacts after erasures. */
export class RetentionSweeper {
  private lastCompact = -Infinity;
  /** Erasures not yet followed by a compaction. */
  private uncompacted = 0;
  private timer: NodeJS.Timeout | undefined;
  private running: Promise<SweepResult> | undefined;

  constructor(private readonly d: RetentionSweeperDeps) {}

  /** Sweeps once now, then every hour; resolves after the first sweep. */
  async start(): Promise<void> {
    if (this.d.textDays === null) return;
    await this.sweep();
    this.timer = setInterval(() => void this.sweep(), this.d.sweepEveryMs ?? HOUR_MS);
    this.timer.unref();
  }

  /** Stops the schedule and waits for a sweep in progress. */
  async stop(): Promise<void> {
    clearInterval(this.timer);
    await this.running;
  }

  /** One sweep; never rejects (a failure is logged and the next sweep tries again). */
  sweep(): Promise<SweepResult> {
    this.running ??= this.sweepOnce().finally(() => { this.running = undefined; });
    return this.running;
  }

  private async sweepOnce(): Promise<SweepResult> {
    const result: SweepResult = { erased: 0, compacted: false };
    if (this.d.textDays === null) return result;
    const now = this.d.now?.() ?? new Date();
    try {
      result.erased = await this.d.store.eraseTextBefore(addDays(dayOf(now), -this.d.textDays));
      if (result.erased > 0) this.d.logger.info({ erased: result.erased }, 'retention: erased text of old articles');
      this.uncompacted += result.erased;
      if (this.uncompacted > 0 && now.getTime() - this.lastCompact >= (this.d.compactEveryMs ?? 24 * HOUR_MS)) {
        const t0 = Date.now();
        await this.d.store.compact();
        this.d.logger.info({ articles: this.uncompacted, ms: Date.now() - t0 }, 'retention: store compacted, erased text is off the disk');
        this.lastCompact = now.getTime();
        this.uncompacted = 0;
        result.compacted = true;
      }
    } catch (err) {
      this.d.logger.error({ err: (err as Error).message }, 'retention sweep failed; the next one tries again');
    }
    return result;
  }
}
