/**
 * Delivers outbox messages to webhook subscribers: signed POSTs, retried with exponential
 * backoff and full jitter (common practice; "Exponential Backoff And Jitter", AWS
 * Architecture Blog, 2015) until a 2xx answer or `maxAttempts`, after which the delivery
 * moves to the dead-letter list. Only 2xx counts as delivered (Standard Webhooks spec).
 *
 * Each poll first hands new notifications of the log to the subscriptions whose alert rules
 * select them (fan-out: each subscription keeps its place in the log, so a notification is
 * queued for it once, however often the poll runs or restarts), then delivers what is due.
 * Each subscription has a lane of its own: its deliveries go one at a time, in order, while
 * other lanes run beside it (up to `concurrency` at once). A receiver that hangs holds up
 * its own lane only; the others keep being served every `pollMs`. A paused subscription
 * gets nothing queued or sent until it is resumed.
 */
import { fetch as undiciFetch, type Agent } from 'undici';
import type { Config } from '../config/schema.js';
import { describeError } from '../errors.js';
import { NetworkGuard, WEBHOOK_NAMES } from '../ingest/network-guard.js';
import type { Logger } from '../logger.js';
import type { Delivery, Outbox, Subscription, Subscriptions } from '../store/store.js';
import { firstMatch, withRule } from './alert-rules.js';
import { signWebhook } from './sign-webhook.js';
import { signingSecrets, syncConfigSubscriptions } from './subscriptions.js';

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
  store: Outbox & Subscriptions;
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
/** Notifications of the log one subscription's rules judge per read, and reads per poll at most. */
const FAN_OUT_BATCH = 500;
const FAN_OUT_READS = 20;

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
  /** The subscriptions as read at the last poll. */
  private subscriptions = new Map<string, Subscription & { cursor: number }>();
  /** The configured subscribers written to the store, once per dispatcher. */
  private synced: Promise<void> | null = null;
  private readonly now: () => Date;
  private readonly random: () => number;
  private readonly fetch: DeliveryFetch;
  private readonly log: Logger;
  private readonly agent: Agent;
  /** Aborts deliveries in flight when the dispatcher stops. */
  private readonly stopping = new AbortController();

  constructor(private readonly d: DispatcherDeps) {
    this.now = d.now ?? (() => new Date());
    this.random = d.random ?? Math.random;
    this.fetch = d.fetch ?? (undiciFetch as unknown as DeliveryFetch);
    this.log = d.logger.child({ stage: 'webhooks' });
    this.agent = new NetworkGuard(d.config, WEBHOOK_NAMES).agent();
  }

  /** Starts polling every `pollMs` (subscriptions can be made through the API at any time). */
  start(): void {
    if (this.timer) return;
    // A poll that fails (the store unreachable) is logged; the next one tries again.
    this.timer = setInterval(
      () => void this.tick().catch((err: unknown) => this.log.warn({ err: describeError(err) }, 'webhook poll failed; retrying')),
      this.d.config.pollMs,
    );
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
    this.synced ??= syncConfigSubscriptions(this.d.store, this.d.config.subscribers, this.now(), this.log).catch((err: unknown) => {
      this.synced = null;
      throw err;
    });
    await this.synced;
    this.subscriptions = new Map((await this.d.store.listSubscriptions()).map((s) => [s.name, s]));
    for (const s of this.subscriptions.values()) if (!s.paused) await this.fanOut(s);
    const free = this.d.config.concurrency - this.lanes.size;
    if (free <= 0) return [];
    const paused = [...this.subscriptions.values()].filter((s) => s.paused).map((s) => s.name);
    const due = await this.d.store.dueDeliveries(this.now().toISOString(), BATCH, [...this.lanes.keys(), ...paused]);
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

  /** Queues the deliveries a subscription's rules select among the notifications past its place in the log. */
  private async fanOut(s: Subscription & { cursor: number }): Promise<void> {
    let from = s.cursor;
    for (let read = 0; read < FAN_OUT_READS; read++) {
      const log = await this.d.store.notificationsAfter(from, FAN_OUT_BATCH);
      // Past the last number given, or everything after `from` pruned: move to the end.
      const to = log.items.at(-1)?.seq ?? log.last;
      if (to <= from) return;
      const deliveries = log.items.flatMap((n) => {
        const rule = firstMatch(s.rules, n.type, n.body);
        return rule === null ? [] : [{ messageId: n.id, rule }];
      });
      // False: another pass moved the place first; the next poll reads it afresh.
      if (!(await this.d.store.fanOut(s.name, from, to, deliveries, this.now().toISOString()))) return;
      from = to;
      if (log.items.length < FAN_OUT_BATCH) return;
    }
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
    const sub = this.subscriptions.get(d.subscriber);
    const attempts = d.attempts + 1;
    if (!sub) {
      await this.d.store.recordAttempt(d.messageId, d.subscriber, {
        status: 'dead',
        attempts,
        nextAt: this.now().toISOString(),
        error: 'subscription deleted',
        latencyMs: 0,
      });
      return;
    }
    // The rule that selected it goes in the signed body; retries and replays send the same bytes.
    const body = d.rule === null ? d.body : withRule(d.body, d.rule);
    let error: string | null = null;
    const sent = performance.now();
    try {
      const res = await this.fetch(sub.url, {
        method: 'POST',
        headers: {
          'content-type': 'application/json',
          'user-agent': 'Strandline-Webhooks/0.1',
          ...signWebhook(signingSecrets(sub, this.now()), d.messageId, this.now(), body),
        },
        body,
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
        latencyMs: seconds * 1000,
      });
      return;
    }
    const dead = attempts >= this.d.config.maxAttempts;
    this.d.observer?.attempted(d.subscriber, dead ? 'dead' : 'failed', seconds);
    const nextAt = new Date(now.getTime() + (dead ? 0 : retryDelayMs(attempts, this.random))).toISOString();
    await this.d.store.recordAttempt(d.messageId, d.subscriber, {
      status: dead ? 'dead' : 'pending',
      attempts,
      nextAt,
      error,
      latencyMs: seconds * 1000,
    });
    this.log[dead ? 'warn' : 'debug'](
      { message: d.messageId, subscriber: d.subscriber, attempts, error },
      dead ? 'delivery gave up; moved to dead letters' : 'delivery failed; will retry',
    );
  }
}
