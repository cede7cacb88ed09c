/**
 * How soon a pushed article is told: articles pushed one per request at a steady rate to a
 * serving process (SQLite file, the default configuration, a local webhook subscriber and
 * a live-stream client), and the time from the push being accepted to the first webhook
 * and the first stream event that names the article. Articles whose every sentence joins
 * an event an outlet already reported give no notification and are counted apart.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { type Server, createServer } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { buildApp } from '../api/build-app.js';
import { DEMO_FEEDS } from '../cli/common.js';
import { parseConfig } from '../config/load-config.js';
import { readReplayInput } from '../ingest/replay-source.js';
import { LocalIntake } from '../local-intake.js';
import { createLogger } from '../logger.js';
import { WebhookDispatcher } from '../notify/webhook-dispatcher.js';
import { createRuntime } from '../runtime.js';

export interface NotifyLatencyRow {
  articlesPerSecond: number;
  pushed: number;
  /** Articles that gave at least one notification (the others are only linked to known events). */
  notified: number;
  webhookP50Ms: number;
  webhookP95Ms: number;
  streamP50Ms: number;
  streamP95Ms: number;
}

const SECRET = `whsec_${Buffer.alloc(32, 9).toString('base64')}`;
const ID = /nl-\d+/g;

/** Pushes `seconds` x `rate` articles and measures both channels. */
export async function notifyLatency(rate = 20, seconds = 15): Promise<NotifyLatencyRow> {
  const firstSeen = { webhook: new Map<string, number>(), stream: new Map<string, number>() };
  const note = (channel: Map<string, number>, text: string): void => {
    const at = performance.now();
    for (const id of text.match(ID) ?? []) if (!channel.has(id)) channel.set(id, at);
  };
  const receiver: Server = createServer((req, res) => {
    let body = '';
    req
      .on('data', (c) => (body += c))
      .on('end', () => {
        note(firstSeen.webhook, body);
        res.writeHead(204).end();
      });
  });
  await new Promise<void>((r) => receiver.listen(0, '127.0.0.1', r));
  const dir = mkdtempSync(join(tmpdir(), 'strandline-notify-'));
  const config = parseConfig({
    store: { path: join(dir, 'store.sqlite') },
    log: { level: 'silent' },
    webhooks: {
      allowPrivateNetworks: true,
      subscribers: [{ name: 'bench', url: `http://127.0.0.1:${(receiver.address() as AddressInfo).port}/hook`, secret: SECRET }],
    },
  });
  const logger = createLogger('silent');
  const rt = await createRuntime(config, logger);
  const intake = new LocalIntake(rt, () => undefined);
  const dispatcher = new WebhookDispatcher({ store: rt.store, config: config.webhooks, logger });
  dispatcher.start();
  const app = await buildApp({
    store: rt.store,
    logger,
    version: 'bench',
    ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
    push: { submit: (a) => intake.submit(a), limits: config.ingest },
  });
  const base = await app.listen({ port: 0, host: '127.0.0.1' });
  const stream = new AbortController();
  const reading = (async () => {
    const res = await fetch(`${base}/api/stream`, { signal: stream.signal });
    const decoder = new TextDecoder();
    try {
      for await (const chunk of res.body!) note(firstSeen.stream, decoder.decode(chunk as Uint8Array, { stream: true }));
    } catch {
      // Aborted at the end.
    }
  })();

  const demo = (await readReplayInput([DEMO_FEEDS], config.ingest)).articles;
  const accepted = new Map<string, number>();
  const total = rate * seconds;
  const start = performance.now();
  const pushes: Promise<void>[] = [];
  for (let i = 0; i < total; i++) {
    const wait = start + (i * 1000) / rate - performance.now();
    if (wait > 0) await new Promise((r) => setTimeout(r, wait));
    const a = demo[i % demo.length]!;
    const id = `nl-${i}`;
    // A new copy each round, dated as the demo is, so each is linked as news of its day.
    const article = {
      id,
      outlet: a.outlet,
      title: a.title,
      url: `https://bench.example/${id}`,
      published: a.published,
      text: `${a.text} (${id})`,
    };
    pushes.push(
      fetch(`${base}/api/articles`, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify(article),
      }).then(async (r) => {
        await r.arrayBuffer();
        accepted.set(id, performance.now());
      }),
    );
  }
  await Promise.all(pushes);
  await intake.idle();
  // Deliveries and the stream catch up within a few polls.
  await new Promise((r) => setTimeout(r, 2000));
  stream.abort();
  await reading;
  await app.close();
  await dispatcher.stop();
  await rt.close();
  await new Promise((r) => receiver.close(r));
  rmSync(dir, { recursive: true, force: true });

  const delays = (channel: Map<string, number>): number[] =>
    [...accepted].flatMap(([id, at]) => (channel.has(id) ? [Math.max(0, channel.get(id)! - at)] : [])).sort((x, y) => x - y);
  const webhook = delays(firstSeen.webhook);
  const streamed = delays(firstSeen.stream);
  return {
    articlesPerSecond: rate,
    pushed: total,
    notified: streamed.length,
    webhookP50Ms: quantile(webhook, 0.5),
    webhookP95Ms: quantile(webhook, 0.95),
    streamP50Ms: quantile(streamed, 0.5),
    streamP95Ms: quantile(streamed, 0.95),
  };
}

function quantile(sorted: readonly number[], q: number): number {
  if (sorted.length === 0) return NaN;
  return sorted[Math.min(sorted.length - 1, Math.ceil(q * sorted.length) - 1)]!;
}
