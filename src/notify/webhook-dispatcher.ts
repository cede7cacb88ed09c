/**
 * Delivers outbox messages to webhook subscribers: signed POSTs, retried with exponential
 * backoff and full jitter (common practice; "Exponential Backoff And Jitter", AWS
 * Architecture Blog, 2015) until a 2xx answer or `maxAttempts`, after which the delivery
 * moves to the dead-letter list. Only 2xx counts as delivered (Standard Webhooks spec).
 */
import type { Config, Subscriber } from '../config/schema.js';
import { describeError } from '../errors.js';
import type { Logger } from '../logger.js';
import type { Delivery, Store } from '../store/store.js';
import { signWebhook } from './sign-webhook.js';

/** Injected so tests control time, chance and the network. */
export interface DispatcherDeps {
  store: Store;
  config: Readonly<Config['webhooks']>;
  logger: Logger;
  now?: () => Date;
  random?: () => number;
  fetch?: typeof fetch;
}

const BASE_DELAY_MS = 5_000;
const MAX_DELAY_MS = 60 * 60_000;
const BATCH = 50;

/** Delay before retry `attempt` (1-based): a random value up to 5 s x 2^(attempt-1), capped at one hour. */
export function retryDelayMs(attempt: number, random: () => number): number {
  const ceiling = Math.min(MAX_DELAY_MS, BASE_DELAY_MS * 2 ** (attempt - 1));
  // Full jitter, but never less than a second so a failing receiver is not hammered.
  return Math.max(1000, Math.floor(random() * ceiling));
}

/** Polls the outbox and delivers what is due. */
export class WebhookDispatcher {
  private timer: NodeJS.Timeout | null = null;
  private running: Promise<void> | null = null;
  private readonly subscribers: Map<string, Subscriber>;
  private readonly now: () => Date;
  private readonly random: () => number;
  private readonly fetch: typeof fetch;
  private readonly log: Logger;

  constructor(private readonly d: DispatcherDeps) {
    this.subscribers = new Map(d.config.subscribers.map((s) => [s.name, s]));
    this.now = d.now ?? (() => new Date());
    this.random = d.random ?? Math.random;
    this.fetch = d.fetch ?? fetch;
    this.log = d.logger.child({ stage: 'webhooks' });
  }

  /** Starts polling every `pollMs`. */
  start(): void {
    if (this.timer || this.subscribers.size === 0) return;
    this.timer = setInterval(() => void this.tick(), this.d.config.pollMs);
    this.timer.unref();
  }

  /** Stops polling and waits for the delivery round in progress. */
  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    await this.running;
  }

  /** One round: delivers every due message once. Rounds never overlap. */
  tick(): Promise<void> {
    this.running ??= this.round().finally(() => {
      this.running = null;
    });
    return this.running;
  }

  private async round(): Promise<void> {
    const due = await this.d.store.dueDeliveries(this.now().toISOString(), BATCH);
    for (const delivery of due) await this.deliver(delivery);
  }

  private async deliver(d: Delivery): Promise<void> {
    const sub = this.subscribers.get(d.subscriber);
    const attempts = d.attempts + 1;
    if (!sub) {
      await this.d.store.recordAttempt(d.messageId, d.subscriber, { status: 'dead', attempts, nextAt: this.now().toISOString(), error: 'subscriber no longer configured' });
      return;
    }
    let error: string | null = null;
    try {
      const res = await this.fetch(sub.url, {
        method: 'POST',
        headers: { 'content-type': 'application/json', 'user-agent': 'Strandline-Webhooks/0.1', ...signWebhook(sub.secret, d.messageId, this.now(), d.body) },
        body: d.body,
        signal: AbortSignal.timeout(this.d.config.timeoutMs),
        redirect: 'manual',
      });
      // Drain the body so the connection can be reused.
      await res.arrayBuffer().catch(() => undefined);
      if (res.status < 200 || res.status > 299) error = `HTTP ${res.status}`;
    } catch (err) {
      error = describeError((err as Error).cause ?? err);
    }
    const now = this.now();
    if (error === null) {
      await this.d.store.recordAttempt(d.messageId, d.subscriber, { status: 'delivered', attempts, nextAt: now.toISOString(), error: null });
      return;
    }
    const dead = attempts >= this.d.config.maxAttempts;
    const nextAt = new Date(now.getTime() + (dead ? 0 : retryDelayMs(attempts, this.random))).toISOString();
    await this.d.store.recordAttempt(d.messageId, d.subscriber, { status: dead ? 'dead' : 'pending', attempts, nextAt, error });
    this.log[dead ? 'warn' : 'debug']({ message: d.messageId, subscriber: d.subscriber, attempts, error }, dead ? 'delivery gave up; moved to dead letters' : 'delivery failed; will retry');
  }
}
