/**
 * Delivers outbox messages to webhook subscribers: signed POSTs, retried with exponential
 * backoff and full jitter (common practice; "Exponential Backoff And Jitter", AWS
 * Architecture Blog, 2015) until a 2xx answer or `maxAttempts`, after which the delivery
 * moves to the dead-letter list. Only 2xx counts as delivered (Standard Webhooks spec).
 *
 * Each subscriber has a lane of its own: its deliveries go one at a time, in order, while
 * other subscribers' lanes run beside it (up to `concurrency` at once). A receiver that
 * hangs holds up its own lane only; the others keep being served every `pollMs`.
 */
import { fetch as undiciFetch, type Agent } from 'undici';
import type { Config, Subscriber } from '../config/schema.js';
import { describeError } from '../errors.js';
import { NetworkGuard, WEBHOOK_NAMES } from '../ingest/network-guard.js';
import type { Logger } from '../logger.js';
import type { Delivery, Outbox } from '../store/store.js';
import { signWebhook } from './sign-webhook.js';

/** The fetch the dispatcher calls: undici's, with the address-guarded agent as dispatcher. */
export type DeliveryFetch = (
  url: string,
  init: { method: string; headers: Record<string, string>; body: string; signal: AbortSignal; redirect: 'manual'; dispatcher: Agent },
) => Promise<Response>;

/** Told of each delivery attempt: its outcome (delivered; failed, to be retried; dead, given up) and how long it took. */
export interface DeliveryObserver {
  attempted(subscriber: string, outcome: 'delivered' | 'failed' | 'dead', seconds: number): void;
}

/** Injected so tests control time, chance and the network. */
export interface DispatcherDeps {
  store: Outbox;
  config: Readonly<Config['webhooks']>;
  logger: Logger;
  now?: () => Date;
  random?: () => number;
  fetch?: DeliveryFetch;
  /** Told of each attempt's outcome and time (the process's metrics). */
  observer?: DeliveryObserver;
}

const BASE_DELAY_MS = 5_000;
const MAX_DELAY_MS = 60 * 60_000;
/** Due deliveries read per poll (over every idle subscriber). */
const BATCH = 50;

/** Delay before retry `attempt` (1-based): a random value up to 5 s x 2^(attempt-1), capped at one hour. */
export function retryDelayMs(attempt: number, random: () => number): number {
  const ceiling = Math.min(MAX_DELAY_MS, BASE_DELAY_MS * 2 ** (attempt - 1));
  // Full jitter, but never less than a second so a failing receiver is not hammered.
  return Math.max(1000, Math.floor(random() * ceiling));
}

/** Polls the outbox and delivers what is due, one lane per subscriber. */
export class WebhookDispatcher {
  private timer: NodeJS.Timeout | null = null;
  private polling: Promise<Promise<void>[]> | null = null;
  /** Subscribers with a delivery in progress, and the lane that runs it. */
  private readonly lanes = new Map<string, Promise<void>>();
  private readonly subscribers: Map<string, Subscriber>;
  private readonly now: () => Date;
  private readonly random: () => number;
  private readonly fetch: DeliveryFetch;
  private readonly log: Logger;
  private readonly agent: Agent;
  /** Aborts deliveries in flight when the dispatcher stops. */
  private readonly stopping = new AbortController();

  constructor(private readonly d: DispatcherDeps) {
    this.subscribers = new Map(d.config.subscribers.map((s) => [s.name, s]));
    this.now = d.now ?? (() => new Date());
    this.random = d.random ?? Math.random;
    this.fetch = d.fetch ?? (undiciFetch as unknown as DeliveryFetch);
    this.log = d.logger.child({ stage: 'webhooks' });
    this.agent = new NetworkGuard(d.config, WEBHOOK_NAMES).agent();
  }

  /** Starts polling every `pollMs`. */
  start(): void {
    if (this.timer || this.subscribers.size === 0) return;
    this.timer = setInterval(() => void this.tick(), this.d.config.pollMs);
    this.timer.unref();
  }

  /**
   * Stops polling; deliveries in flight are abandoned (they stay due, and go again with the
   * same webhook-id at the next start, so receivers drop a repeat) and their lanes awaited.
   */
  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    this.stopping.abort();
    await this.polling?.catch(() => undefined);
    await Promise.all([...this.lanes.values()]);
    await this.agent.close().catch(() => undefined);
  }

  /**
   * One poll: starts a lane for each idle subscriber with due deliveries. Resolves when the
   * lanes it started have finished (the timer does not wait; tests do).
   */
  async tick(): Promise<void> {
    if (this.stopping.signal.aborted) return;
    this.polling ??= this.startLanes().finally(() => {
      this.polling = null;
    });
    await Promise.all(await this.polling);
  }

  private async startLanes(): Promise<Promise<void>[]> {
    const free = this.d.config.concurrency - this.lanes.size;
    if (free <= 0) return [];
    const due = await this.d.store.dueDeliveries(this.now().toISOString(), BATCH, [...this.lanes.keys()]);
    const bySubscriber = new Map<string, Delivery[]>();
    for (const delivery of due) {
      const list = bySubscriber.get(delivery.subscriber);
      if (list) list.push(delivery);
      else if (bySubscriber.size < free) bySubscriber.set(delivery.subscriber, [delivery]);
    }
    const started: Promise<void>[] = [];
    for (const [subscriber, deliveries] of bySubscriber) {
      const lane = this.runLane(deliveries).finally(() => this.lanes.delete(subscriber));
      this.lanes.set(subscriber, lane);
      started.push(lane);
    }
    return started;
  }

  private async runLane(deliveries: readonly Delivery[]): Promise<void> {
    for (const delivery of deliveries) {
      if (this.stopping.signal.aborted) return;
      try {
        await this.deliver(delivery);
      } catch (err) {
        // The store refused the record: the delivery stays due and goes again later.
        this.log.warn(
          { message: delivery.messageId, subscriber: delivery.subscriber, err: describeError(err) },
          'delivery outcome not recorded',
        );
        return;
      }
    }
  }

  private async deliver(d: Delivery): Promise<void> {
    const sub = this.subscribers.get(d.subscriber);
    const attempts = d.attempts + 1;
    if (!sub) {
      await this.d.store.recordAttempt(d.messageId, d.subscriber, {
        status: 'dead',
        attempts,
        nextAt: this.now().toISOString(),
        error: 'subscriber no longer configured',
      });
      return;
    }
    let error: string | null = null;
    const sent = performance.now();
    try {
      const res = await this.fetch(sub.url, {
        method: 'POST',
        headers: {
          'content-type': 'application/json',
          'user-agent': 'Strandline-Webhooks/0.1',
          ...signWebhook(sub.secret, d.messageId, this.now(), d.body),
        },
        body: d.body,
        signal: AbortSignal.any([AbortSignal.timeout(this.d.config.timeoutMs), this.stopping.signal]),
        redirect: 'manual',
        dispatcher: this.agent,
      });
      // Drain the body so the connection can be reused.
      await res.arrayBuffer().catch(() => undefined);
      if (res.status < 200 || res.status > 299) error = `HTTP ${res.status}`;
    } catch (err) {
      // Stopping is not the receiver's failure: the attempt is not counted.
      if (this.stopping.signal.aborted) return;
      error = describeError((err as Error).cause ?? err);
    }
    const now = this.now();
    const seconds = (performance.now() - sent) / 1000;
    if (error === null) {
      this.d.observer?.attempted(d.subscriber, 'delivered', seconds);
      await this.d.store.recordAttempt(d.messageId, d.subscriber, {
        status: 'delivered',
        attempts,
        nextAt: now.toISOString(),
        error: null,
      });
      return;
    }
    const dead = attempts >= this.d.config.maxAttempts;
    this.d.observer?.attempted(d.subscriber, dead ? 'dead' : 'failed', seconds);
    const nextAt = new Date(now.getTime() + (dead ? 0 : retryDelayMs(attempts, this.random))).toISOString();
    await this.d.store.recordAttempt(d.messageId, d.subscriber, { status: dead ? 'dead' : 'pending', attempts, nextAt, error });
    this.log[dead ? 'warn' : 'debug'](
      { message: d.messageId, subscriber: d.subscriber, attempts, error },
      dead ? 'delivery gave up; moved to dead letters' : 'delivery failed; will retry',
    );
  }
}
