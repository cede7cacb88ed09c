/**
 * A worker process's loop: reads articles from the intake stream through the consumer
 * group `workers`, analyses them, picks their event sentences, embeds them when the model
 * does not learn from the stream (a transformer; TF-IDF vectors depend on stream order and
 * are made by the linker), and hands each answer to the linker with the entry's
 * acknowledgement in one script. An entry is acknowledged only once its answer is on the
 * analysed stream. A periodic XAUTOCLAIM sweep takes over entries a dead or stuck worker
 * left pending; an entry that fails `maxDeliveries` times goes to the dead-letter stream.
 */
import { hostname } from 'node:os';
import type { RedisClient } from '../store/redis/connect.js';
import type { Config } from '../config/schema.js';
import type { Embedder } from '../embed/embedder.js';
import { describeError } from '../errors.js';
import type { Logger } from '../logger.js';
import { type DetectedWork, detectWork, embedTogether } from '../pipeline/index.js';
import type { Article } from '../records.js';
import type { Keyspace } from '../store/redis/keys.js';
import { defineScript } from '../store/redis/scripts.js';
import type { Nlp } from '../text/nlp.js';
import { WORKER_GROUP, ensureIntake, fieldMap } from './intake.js';
import { STOPPED, StopSignal } from './stop-signal.js';
import { decodeArticle, encodeWork } from './wire.js';

/** What a worker needs. */
export interface WorkerDeps {
  config: Readonly<Config>;
  /** For commands and the hand-off script. */
  redis: RedisClient;
  /** Its own connection for the blocking read (a blocked connection can do nothing else). */
  blocking: RedisClient;
  keys: Keyspace;
  nlp: Nlp;
  embedder: Embedder;
  logger: Logger;
}

/** What a worker has done, for logs and tests. */
export interface WorkerCounts {
  answered: number;
  failed: number;
  dead: number;
  claimed: number;
}

type Entry = [id: string, fields: string[]];

export class AnalysisWorker {
  readonly name: string;
  readonly counts: WorkerCounts = { answered: 0, failed: 0, dead: 0, claimed: 0 };
  private stopping = false;
  private readonly stopSignal = new StopSignal();
  private loop: Promise<void> | null = null;
  private lastSweep = 0;
  private readonly log: Logger;
  private readonly handOffScript: ReturnType<typeof defineScript>;

  constructor(private readonly d: WorkerDeps) {
    // Unique per process and stable for its life: XAUTOCLAIM takes over a dead one's entries.
    this.name = `${hostname()}-${process.pid}`;
    this.log = d.logger.child({ stage: 'worker', consumer: this.name });
    this.handOffScript = defineScript(d.redis, 'hand-off');
  }

  /** Starts reading; resolves once the group exists and this worker is a member of it. */
  async start(): Promise<void> {
    await ensureIntake(this.d.redis, this.d.keys);
    // Listed at once (XINFO CONSUMERS), not only after its first entry.
    await this.d.redis.xgroup('CREATECONSUMER', this.d.keys.intake, WORKER_GROUP, this.name);
    this.loop = this.run();
  }

  /** Finishes the entries in hand and stops. */
  async stop(): Promise<void> {
    this.stopping = true;
    this.stopSignal.stop();
    this.d.blocking.disconnect();
    await this.loop?.catch(() => undefined);
  }

  private async run(): Promise<void> {
    const q = this.d.config.queue;
    while (!this.stopping) {
      try {
        if (Date.now() - this.lastSweep >= q.claimIdleMs / 2) await this.sweep();
        const reply = (await this.stopSignal.race(
          this.d.blocking.xreadgroup(
            'GROUP',
            WORKER_GROUP,
            this.name,
            'COUNT',
            q.batch,
            'BLOCK',
            q.blockMs,
            'STREAMS',
            this.d.keys.intake,
            '>',
          ),
        )) as [string, Entry[]][] | null | typeof STOPPED;
        if (reply === STOPPED) break;
        if (reply) await this.process(reply[0]![1]);
      } catch (err) {
        if (this.stopping) break;
        this.log.warn({ err: describeError(err) }, 'worker read failed; retrying');
        await sleep(500);
      }
    }
  }

  /** Takes over entries idle longer than claimIdleMs (their worker died or hangs). */
  private async sweep(): Promise<void> {
    this.lastSweep = Date.now();
    const q = this.d.config.queue;
    let cursor = '0-0';
    do {
      const [next, entries] = (await this.d.redis.xautoclaim(
        this.d.keys.intake,
        WORKER_GROUP,
        this.name,
        q.claimIdleMs,
        cursor,
        'COUNT',
        q.batch,
      )) as [string, (Entry | null)[], string[]?];
      cursor = next;
      const live = entries.filter((e): e is Entry => e !== null && Array.isArray(e[1]));
      if (live.length) {
        this.counts.claimed += live.length;
        this.log.info({ entries: live.length }, 'claimed entries another worker left pending');
        await this.process(live);
      }
    } while (cursor !== '0-0' && !this.stopping);
  }

  private async process(entries: readonly Entry[]): Promise<void> {
    const ready: { id: string; work: DetectedWork }[] = [];
    for (const [id, fields] of entries) {
      const body = fieldMap(fields).article ?? '';
      let article: Article;
      try {
        article = decodeArticle(body);
      } catch (err) {
        // A malformed entry will not get better by retrying.
        await this.giveUp(id, body, describeError(err));
        continue;
      }
      try {
        // Workers scale by process, so each analyses on its own thread.
        ready.push({ id, work: detectWork(this.d.nlp, article, this.d.config.detect.threshold) });
      } catch (err) {
        await this.failed(id, body, describeError(err));
      }
    }
    if (ready.length === 0) return;
    if (!this.d.embedder.learn) {
      try {
        const vectors = await embedTogether(
          this.d.embedder,
          ready.map((r) => r.work.mentions),
        );
        ready.forEach((r, i) => (r.work = { ...r.work, vectors: vectors[i]! }));
      } catch (err) {
        for (const r of ready) await this.failed(r.id, JSON.stringify(r.work.article), `embed: ${describeError(err)}`);
        return;
      }
    }
    for (const r of ready) {
      await this.handOff(r.id, 'analysed', encodeWork(r.work));
      this.counts.answered++;
    }
  }

  /** Leaves a failed entry pending for a retry after claimIdleMs, or gives it up after maxDeliveries. */
  private async failed(id: string, body: string, error: string): Promise<void> {
    this.counts.failed++;
    const pending = (await this.d.redis.xpending(this.d.keys.intake, WORKER_GROUP, id, id, 1)) as [string, string, number, number][];
    const deliveries = pending[0]?.[3] ?? 1;
    this.log.warn({ entry: id, deliveries, err: error }, 'article failed in the worker');
    if (deliveries >= this.d.config.queue.maxDeliveries) await this.giveUp(id, body, `${error} (after ${deliveries} deliveries)`);
  }

  private async giveUp(id: string, body: string, error: string): Promise<void> {
    this.counts.dead++;
    this.log.error({ entry: id, err: error }, 'article moved to the dead-letter stream');
    await this.handOff(id, 'dead', body.slice(0, 64_000), error);
  }

  private async handOff(id: string, kind: 'analysed' | 'dead', body: string, error = ''): Promise<void> {
    await this.handOffScript(this.d.keys.intake, this.d.keys.prefix, id, kind, body, error);
  }
}

function sleep(ms: number): Promise<void> {
  return new Promise((r) => setTimeout(r, ms));
}
