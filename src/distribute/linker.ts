/**
 * The linker process's loop. Linking is serial by nature, so each partition has exactly one
 * linker: it holds a lease in Redis (renewed while it runs; another linker waits for it to
 * lapse). It links the analysed articles in intake order, whatever order the workers
 * finished them in, so a scale-out run makes the same events as a single process on the
 * same input. After each commit it records its position and clears what it consumed.
 *
 * Crash safety: commits are idempotent (an article already stored is not stored again), so
 * a linker that dies between a commit and its position write repeats a few articles as
 * "already stored" and changes nothing; its successor resumes the linker from the store.
 */
import { randomUUID } from 'node:crypto';
import type { RedisClient } from '../store/redis/connect.js';
import { type Observable, Subject } from 'rxjs';
import { describeError } from '../errors.js';
import type { Logger } from '../logger.js';
import { type ArticleOutcome, type DetectedWork, type Flow, type PipelineContext, admitStage, linkStages } from '../pipeline.js';
import type { Keyspace } from '../store/redis/keys.js';
import { defineScript } from '../store/redis/scripts.js';
import { fieldMap } from './intake.js';
import { decodeWork } from './wire.js';

/** What the linker loop needs beyond the pipeline context. */
export interface LinkerDeps {
  ctx: PipelineContext;
  redis: RedisClient;
  /** Its own connection for the blocking wait on the analysed stream. */
  blocking: RedisClient;
  keys: Keyspace;
  logger: Logger;
  /** Lease length, ms (renewed at a third of it). */
  leaseMs?: number;
}

/** Intake entries looked ahead per round. */
const LOOKAHEAD = 128;
/** Most articles between reading and committing (memory bound). */
const IN_FLIGHT = 256;

interface Pending {
  entry: string;
  analysed: string;
}

export class QueueLinker {
  private stopping = false;
  private loop: Promise<void> | null = null;
  private readonly token = randomUUID();
  private readonly outcomes = new Subject<ArticleOutcome>();
  private readonly log: Logger;
  private leaseTimer: NodeJS.Timeout | null = null;

  /** Every outcome, in intake order (tests, logs). */
  readonly outcome$: Observable<ArticleOutcome> = this.outcomes.asObservable();

  private readonly renewLease: ReturnType<typeof defineScript>;
  private readonly releaseLease: ReturnType<typeof defineScript>;

  constructor(private readonly d: LinkerDeps) {
    this.log = d.logger.child({ stage: 'linker' });
    this.renewLease = defineScript(d.redis, 'lease-renew');
    this.releaseLease = defineScript(d.redis, 'lease-release');
  }

  /** Waits for the partition's lease, then links until stopped. */
  async start(): Promise<void> {
    const leaseMs = this.d.leaseMs ?? 15_000;
    while (!this.stopping && (await this.d.redis.set(this.d.keys.linkerLease, this.token, 'PX', leaseMs, 'NX')) !== 'OK') {
      this.log.info('another linker holds this partition; waiting for its lease to lapse');
      await sleep(Math.min(leaseMs / 3, 2000));
    }
    if (this.stopping) return;
    this.leaseTimer = setInterval(() => void this.renew(leaseMs), leaseMs / 3);
    this.leaseTimer.unref();
    this.loop = this.run();
  }

  /** Finishes the group in hand, releases the lease and stops. */
  async stop(): Promise<void> {
    this.stopping = true;
    this.d.blocking.disconnect();
    await this.loop?.catch(() => undefined);
    if (this.leaseTimer) clearInterval(this.leaseTimer);
    await this.releaseLease(this.d.keys.linkerLease, this.token).catch(() => undefined);
    this.outcomes.complete();
  }

  private async renew(leaseMs: number): Promise<void> {
    const held = await this.renewLease(this.d.keys.linkerLease, this.token, leaseMs).catch(() => 0);
    if (held !== 1 && !this.stopping) {
      // Another linker took over (this one stalled past its lease): stop rather than link twice.
      this.log.error('lost the linker lease; stopping');
      void this.stop();
    }
  }

  private async run(): Promise<void> {
    const { ctx, redis, keys } = this.d;
    const admit = admitStage(ctx);
    // Entries between reading and their outcome, in order, with what the worker sent.
    const order: { entry: string; body: string }[] = [];
    let inFlight = 0;
    const input = new Subject<Flow<DetectedWork>>();
    const done = new Promise<void>((resolve, reject) => {
      input.pipe(linkStages(ctx)).subscribe({
        next: (o) => {
          inFlight--;
          const { entry, body } = order.shift()!;
          // An article the linker could not store (the store refused the commit) must not
          // vanish with the queue entry: it goes to the dead-letter list with the reason.
          const lost = o.status === 'rejected' && !o.reason?.startsWith('worker:');
          void (lost ? this.deadLetter(entry, o.reason ?? 'not stored', body) : Promise.resolve())
            .then(() => this.advance(entry))
            .catch((err: unknown) => this.log.warn({ err: describeError(err) }, 'position not saved; the next start repeats a few articles harmlessly'));
          this.outcomes.next(o);
        },
        error: reject,
        complete: resolve,
      });
    });
    let position = (await redis.get(keys.linkerPosition)) ?? '0-0';
    let lastSeen = '$';
    while (!this.stopping) {
      try {
        if (inFlight >= IN_FLIGHT) {
          await sleep(5);
          continue;
        }
        const next = await this.nextAnswered(position);
        if (next.length === 0) {
          // Wait for any new analysed entry (or a second), then look again.
          const r = await this.d.blocking.xread('COUNT', 1, 'BLOCK', 1000, 'STREAMS', keys.analysed, lastSeen) as [string, [string, string[]][]][] | null;
          if (r) lastSeen = r[0]![1].at(-1)![0];
          continue;
        }
        const bodies = (await redis.pipeline(next.map((n) => ['xrange', keys.analysed, n.analysed, n.analysed])).exec())!;
        for (let i = 0; i < next.length; i++) {
          const [err, rows] = bodies[i]!;
          const row = (rows as [string, string[]][] | null)?.[0];
          const entry = next[i]!.entry;
          position = entry;
          // An answer recorded but no longer on the stream (not expected): reported, not skipped.
          const f = row ? fieldMap(row[1]) : { entry, rejected: `analysed entry ${next[i]!.analysed} missing${err ? `: ${err.message}` : ''}` };
          order.push({ entry, body: f.work ?? '' });
          inFlight++;
          input.next(await this.toFlow(admit, f));
        }
      } catch (err) {
        if (this.stopping) break;
        this.log.warn({ err: describeError(err) }, 'linker read failed; retrying');
        await sleep(500);
      }
    }
    input.complete();
    await done;
  }

  /** The next intake entries after `position` that have an answer, in order, up to the first that has none yet. */
  private async nextAnswered(position: string): Promise<Pending[]> {
    const { redis, keys } = this.d;
    const ahead = await redis.xrange(keys.intake, `(${position}`, '+', 'COUNT', LOOKAHEAD);
    if (ahead.length === 0) return [];
    const answers = await redis.hmget(keys.answered, ...ahead.map(([id]) => id));
    const out: Pending[] = [];
    for (let i = 0; i < ahead.length && answers[i]; i++) out.push({ entry: ahead[i]![0], analysed: answers[i]! });
    return out;
  }

  private async toFlow(admit: ReturnType<typeof admitStage>, f: Record<string, string>): Promise<Flow<DetectedWork>> {
    if (f.rejected !== undefined) {
      const article = { id: `queue:${f.entry}`, outlet: '', url: null, title: '', published: null, fetched: new Date(0).toISOString(), language: null, text: '', contentHash: '', duplicateOf: null, source: 'queue' };
      return { done: { articleId: article.id, outlet: '', status: 'rejected', reason: `worker: ${f.rejected}`, duplicateOf: null, sentences: 0, mentions: 0, links: 0, opened: 0, outletsAdded: 0, assignments: [], merges: [], splits: [] } };
    }
    const work = decodeWork(f.work!);
    const admitted = await admit(work.article);
    if (admitted.done) return admitted;
    // Copies are recognised here, in intake order; mark the worker's mentions accordingly.
    const article = admitted.go;
    return { go: { ...work, article, mentions: work.mentions.map((m) => ({ ...m, isCopy: article.duplicateOf !== null })) } };
  }

  private async deadLetter(entry: string, error: string, body: string): Promise<void> {
    this.log.error({ entry, err: error }, 'article not stored; moved to the dead-letter list');
    await this.d.redis.xadd(this.d.keys.deadLetters, '*', 'entry', entry, 'error', `linker: ${error}`, 'article', body.slice(0, 64_000));
  }

  /** Saves the position and clears what this entry left in Redis. */
  private async advance(entry: string): Promise<void> {
    const { redis, keys } = this.d;
    const analysed = await redis.hget(keys.answered, entry);
    const p = redis.pipeline().set(keys.linkerPosition, entry).hdel(keys.answered, entry).xtrim(keys.intake, 'MINID', entry);
    if (analysed) p.xdel(keys.analysed, analysed);
    await p.exec();
  }
}

function sleep(ms: number): Promise<void> {
  return new Promise((r) => setTimeout(r, ms));
}
