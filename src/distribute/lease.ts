/**
 * A lease in Redis that at most one process holds at a time (SET NX PX with a random token,
 * renewed while held; a holder that stalls or dies lets it lapse). Used by the api processes
 * of a partition so that exactly one of them polls the feeds; whichever holds it when the
 * holder goes takes over within one lease length.
 */
import { randomUUID } from 'node:crypto';
import type { Logger } from '../logger.js';
import type { RedisClient } from '../store/redis/connect.js';
import { defineScript } from '../store/redis/scripts.js';

/** A lease some process of the partition may hold. */
export class Lease {
  private readonly token = randomUUID();
  private holding = false;
  private timer: NodeJS.Timeout | null = null;
  private turn: Promise<void> = Promise.resolve();
  private readonly renew: ReturnType<typeof defineScript>;
  private readonly release: ReturnType<typeof defineScript>;

  constructor(
    private readonly redis: RedisClient,
    private readonly key: string,
    private readonly what: string,
    private readonly logger: Pick<Logger, 'info' | 'warn'>,
    private readonly ms = 15_000,
  ) {
    this.renew = defineScript(redis, 'lease-renew');
    this.release = defineScript(redis, 'lease-release');
  }

  /** True while this process holds the lease. */
  get held(): boolean {
    return this.holding;
  }

  /** Tries for the lease now, then again (or renews it) every third of its length. */
  async start(): Promise<void> {
    await this.attempt();
    this.timer = setInterval(() => {
      this.turn = this.turn.then(() => this.attempt());
    }, this.ms / 3);
    this.timer.unref();
  }

  /** Stops trying and gives the lease up if held, so another process can take it at once. */
  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    await this.turn;
    if (this.holding) await this.release(this.key, this.token).catch(() => undefined);
    this.holding = false;
  }

  private async attempt(): Promise<void> {
    try {
      if (this.holding) {
        if ((await this.renew(this.key, this.token, this.ms)) === 1) return;
        this.holding = false;
        this.logger.warn({ lease: this.what }, 'lease lost to another process');
        return;
      }
      if ((await this.redis.set(this.key, this.token, 'PX', this.ms, 'NX')) === 'OK') {
        this.holding = true;
        this.logger.info({ lease: this.what }, 'lease taken: this process does the work now');
      }
    } catch (err) {
      // Redis unreachable: stop acting as the holder (another may take over when the lease lapses).
      if (this.holding) this.logger.warn({ lease: this.what, err: (err as Error).message }, 'lease not renewed; stepping back');
      this.holding = false;
    }
  }
}
