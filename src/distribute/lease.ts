/**
 * A lease in Redis that at most one process holds at a time (SET NX PX with a random token,
 * renewed while held; a holder that stalls or dies lets it lapse). The primitives (take,
 * renew, release, the token) serve every lease of a partition; `start`/`stop` add the api
 * processes' policy for the feed poller: try every third of the lease, and step back at
 * once when Redis cannot be reached, so that exactly one of them polls the feeds and
 * whichever holds it when the holder goes takes over within one lease length. The queue
 * linker keeps its own policy on the same primitives (distribute/linker.ts): it waits for
 * the lease, and its writes are fenced with the token.
 */
import { randomUUID } from 'node:crypto';
import type { Logger } from '../logger.js';
import type { RedisClient } from '../store/redis/connect.js';
import { defineScript } from '../store/redis/scripts.js';

/** A lease some process of the partition may hold. */
export class Lease {
  /** This holder's token: the lease's value while held, and the fence of a linker's writes. */
  readonly token = randomUUID();
  private holding = false;
  private timer: NodeJS.Timeout | null = null;
  private turn: Promise<void> = Promise.resolve();
  private readonly renewScript: ReturnType<typeof defineScript>;
  private readonly releaseScript: ReturnType<typeof defineScript>;

  constructor(
    private readonly redis: RedisClient,
    private readonly key: string,
    private readonly what: string,
    private readonly logger: Pick<Logger, 'info' | 'warn'>,
    /** Lease length, ms. */
    readonly ms = 15_000,
  ) {
    this.renewScript = defineScript(redis, 'lease-renew');
    this.releaseScript = defineScript(redis, 'lease-release');
  }

  /** One try: renews the lease if this token holds it, else takes it if free. True when held now; throws when Redis cannot be reached. */
  async take(): Promise<boolean> {
    return (await this.renew()) || (await this.redis.set(this.key, this.token, 'PX', this.ms, 'NX')) === 'OK';
  }

  /** Extends the lease if this token still holds it; false when another holds it or it lapsed. Throws when Redis cannot be reached. */
  async renew(): Promise<boolean> {
    return (await this.renewScript(this.key, this.token, this.ms)) === 1;
  }

  /** Gives the lease up if this token holds it, so another process can take it at once; never throws. */
  async release(): Promise<void> {
    await this.releaseScript(this.key, this.token).catch(() => undefined);
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
    if (this.holding) await this.release();
    this.holding = false;
  }

  private async attempt(): Promise<void> {
    try {
      if (this.holding) {
        if (await this.renew()) return;
        this.holding = false;
        this.logger.warn({ lease: this.what }, 'lease lost to another process');
        return;
      }
      if (await this.take()) {
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
