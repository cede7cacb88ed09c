/**
 * /metrics in the Prometheus text exposition format, through prom-client: what is stored,
 * what waits in the scale-out queue, how polled feeds fare, how webhook deliveries go, the
 * replay's progress, and the process's own figures (CPU, memory, event-loop delay). Each
 * process has its own registry (no module-level state); figures that live in the store or
 * in Redis are read when scraped, so every api process reports the same.
 */
import { Counter, Gauge, Histogram, Registry, collectDefaultMetrics } from 'prom-client';
import type { DeliveryObserver } from '../notify/webhook-dispatcher.js';
import type { IngestStatus, QueueView } from '../status.js';
import type { EventQueries, FeedEntry } from '../store/store.js';

/** What the scrape reads. */
export interface MetricSources {
  store: Pick<EventQueries, 'counts'>;
  queue?: Pick<QueueView, 'depth'> | undefined;
  feeds?: { list(): FeedEntry[] } | undefined;
  ingestStatus?: () => IngestStatus | Promise<IngestStatus>;
}

export class Metrics implements DeliveryObserver {
  readonly registry = new Registry();
  private readonly deliveries: Counter<'subscriber' | 'outcome'>;
  private readonly latency: Histogram<'subscriber'>;

  constructor() {
    collectDefaultMetrics({ register: this.registry });
    this.deliveries = new Counter({
      name: 'strandline_webhook_deliveries_total',
      help: 'Webhook delivery attempts by subscriber and outcome (delivered; failed, to be retried; dead, given up).',
      labelNames: ['subscriber', 'outcome'],
      registers: [this.registry],
    });
    this.latency = new Histogram({
      name: 'strandline_webhook_delivery_seconds',
      help: 'Time from sending a webhook to its answer (or failure), seconds.',
      labelNames: ['subscriber'],
      buckets: [0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10],
      registers: [this.registry],
    });
  }

  attempted(subscriber: string, outcome: 'delivered' | 'failed' | 'dead', seconds: number): void {
    this.deliveries.inc({ subscriber, outcome });
    this.latency.observe({ subscriber }, seconds);
  }

  /** Registers the figures read at each scrape; call once, with what this process has. */
  watch(s: MetricSources): this {
    const registers = [this.registry];
    new Gauge({
      name: 'strandline_store_rows',
      help: 'Rows in the store by kind (articles, sentences, mentions, links, events, stories).',
      labelNames: ['kind'],
      registers,
      async collect() {
        for (const [kind, n] of Object.entries(await s.store.counts())) this.set({ kind }, n);
      },
    });
    if (s.queue) {
      const queue = s.queue;
      new Gauge({
        name: 'strandline_queue_entries',
        help: 'Scale-out queue entries: intake (waiting to be analysed or linked), analysed (waiting for the linker), dead letters.',
        labelNames: ['queue'],
        registers,
        async collect() {
          const d = await queue.depth();
          this.set({ queue: 'intake' }, d.intake);
          this.set({ queue: 'analysed' }, d.analysed);
          this.set({ queue: 'dead_letters' }, d.deadLetters);
        },
      });
    }
    if (s.feeds) {
      const feeds = s.feeds;
      new Gauge({
        name: 'strandline_feeds',
        help: 'Polled feeds by health: ok (last poll answered), failing (failed polls in a row), paused.',
        labelNames: ['health'],
        registers,
        collect() {
          const all = feeds.list();
          this.set({ health: 'paused' }, all.filter((f) => f.paused).length);
          this.set({ health: 'failing' }, all.filter((f) => !f.paused && f.state.failures > 0).length);
          this.set({ health: 'ok' }, all.filter((f) => !f.paused && f.state.failures === 0).length);
        },
      });
    }
    if (s.ingestStatus) {
      const status = s.ingestStatus;
      new Gauge({
        name: 'strandline_replay_articles',
        help: 'The replay in progress or last run: articles in all, processed, stored and rejected.',
        labelNames: ['stage'],
        registers,
        async collect() {
          const st = await status();
          for (const stage of ['total', 'processed', 'stored', 'rejected'] as const) this.set({ stage }, st[stage]);
        },
      });
    }
    return this;
  }
}
