/**
 * Applies the retention settings every hour: `retention.textDays` erases the stored text of
 * articles published more than that many days ago, and compacts the store (`Store.compact`,
 * so the erased text leaves the disk as well) once a day at most, at the first sweep that
 * erased something after the last compaction (compaction rewrites the whole SQLite file, so
 * it is not run after every hourly erasure); `retention.notificationDays` deletes webhook
 * notifications whose deliveries settled that long ago, so the outbox does not grow with
 * the stream.
 */
import type { Logger } from '../logger.js';
import { addDays, dayOf } from '../text/days.js';
import type { Outbox, Retention } from './store.js';

/** What the sweeper needs. */
export interface RetentionSweeperDeps {
  store: Pick<Retention, 'eraseTextBefore' | 'compact'> & Pick<Outbox, 'pruneNotifications'>;
  /** Days of text to keep; null keeps it all. */
  textDays: number | null;
  /** Days to keep settled notifications; null keeps them all. With both null the sweeper does nothing. */
  notificationDays: number | null;
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
  /** Notifications deleted. */
  pruned: number;
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
    if (this.d.textDays === null && this.d.notificationDays === null) return;
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
    this.running ??= this.sweepOnce().finally(() => {
      this.running = undefined;
    });
    return this.running;
  }

  private async sweepOnce(): Promise<SweepResult> {
    const result: SweepResult = { erased: 0, compacted: false, pruned: 0 };
    const now = this.d.now?.() ?? new Date();
    // Each part fails on its own: a failed erasure does not hold back pruning, nor the reverse.
    if (this.d.textDays !== null) {
      try {
        result.erased = await this.d.store.eraseTextBefore(addDays(dayOf(now), -this.d.textDays));
        if (result.erased > 0) this.d.logger.info({ erased: result.erased }, 'retention: erased text of old articles');
        this.uncompacted += result.erased;
        if (this.uncompacted > 0 && now.getTime() - this.lastCompact >= (this.d.compactEveryMs ?? 24 * HOUR_MS)) {
          const t0 = Date.now();
          await this.d.store.compact();
          this.d.logger.info(
            { articles: this.uncompacted, ms: Date.now() - t0 },
            'retention: store compacted, erased text is off the disk',
          );
          this.lastCompact = now.getTime();
          this.uncompacted = 0;
          result.compacted = true;
        }
      } catch (err) {
        this.d.logger.error({ err: (err as Error).message }, 'retention: erasing old text failed; the next sweep tries again');
      }
    }
    if (this.d.notificationDays !== null) {
      try {
        result.pruned = await this.d.store.pruneNotifications(
          new Date(now.getTime() - this.d.notificationDays * 24 * HOUR_MS).toISOString(),
        );
        if (result.pruned > 0) this.d.logger.info({ notifications: result.pruned }, 'retention: deleted settled notifications');
      } catch (err) {
        this.d.logger.error({ err: (err as Error).message }, 'retention: pruning notifications failed; the next sweep tries again');
      }
    }
    return result;
  }
}
