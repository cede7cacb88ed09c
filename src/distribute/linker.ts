/**
 * The linker process's loop. Linking is serial by nature, so each partition has exactly one
 * linker: it holds a lease in Redis (lease.ts; renewed while it runs, another linker waits
 * for it to lapse), and every write it makes is fenced with the lease's token, so a linker that
 * stalled past its lease cannot write over its successor's work. A linker whose lease may
 * have lapsed (Redis gone for longer than the lease) pauses, takes the lease back when it
 * can, reloads from the store and goes on: it neither idles alive nor links twice. It links the analysed articles in intake order, whatever order the workers
 * finished them in, so a scale-out run makes the same events as a single process on the
 * same input. After each commit it records its position and clears what it consumed.
 *
 * Crash safety: commits are idempotent (an article already stored is not stored again), so
 * a linker that dies between a commit and its position write repeats a few articles as
 * "already stored" and changes nothing; its successor resumes the linker from the store.
 */
import type { RedisClient } from '../store/redis/connect.js';
import { type Observable, Subject } from 'rxjs';
import { describeError } from '../errors.js';
import type { Logger } from '../logger.js';
import {
  type ArticleOutcome,
  type DetectedWork,
  type Flow,
  type PipelineContext,
  admitWork,
  linkStages,
  outcomeOf,
  reloadLinking,
} from '../pipeline/index.js';
import type { Keyspace } from '../store/redis/keys.js';
import { applyCorrection } from '../link/corrections.js';
import { CorrectionQueue } from './correction-queue.js';
import { fieldMap } from './intake.js';
import { Lease } from './lease.js';
import { decodeWork } from './wire.js';
import { STOPPED, StopSignal } from './stop-signal.js';

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
  /** Fences the store's writes with the lease token (null lifts it), so a linker that lost the lease cannot write. */
  fence?: (token: string | null) => void;
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
  private readonly stopSignal = new StopSignal();
  private loop: Promise<void> | null = null;
  private readonly outcomes = new Subject<ArticleOutcome>();
  private readonly log: Logger;
  private leaseTimer: NodeJS.Timeout | null = null;
  /** Set when the lease may have lapsed: the run in hand winds down and the lease is sought again. */
  private lost = false;
  /** When the lease was last taken or renewed (Date.now()). */
  private renewedAt = 0;
  private renewing = false;
  /** Position writes, in order; awaited before the position is read again. */
  private advancing: Promise<void> = Promise.resolve();
  private readonly leaseMs: number;

  /** Every outcome, in intake order (tests, logs). */
  readonly outcome$: Observable<ArticleOutcome> = this.outcomes.asObservable();

  private readonly lease: Lease;

  constructor(private readonly d: LinkerDeps) {
    this.log = d.logger.child({ stage: 'linker' });
    this.leaseMs = d.leaseMs ?? 15_000;
    this.lease = new Lease(d.redis, d.keys.linkerLease, 'linker', this.log, this.leaseMs);
  }

  /** Waits for the partition's lease, then links until stopped (taking the lease back whenever it lapses). */
  async start(): Promise<void> {
    if (!(await this.acquire())) return;
    this.loop = this.supervise();
  }

  /** Finishes the group in hand, releases the lease and stops. */
  async stop(): Promise<void> {
    this.stopping = true;
    this.stopSignal.stop();
    this.d.blocking.disconnect();
    await this.loop?.catch(() => undefined);
    this.stopRenewing();
    await this.lease.release();
    this.d.fence?.(null);
    this.outcomes.complete();
  }

  /**
   * Links while the lease holds; when it may have lapsed (Redis unreachable for longer than
   * the lease, or another linker took it), winds the run down, waits to take the lease back,
   * reloads linking state from the store (another linker may have linked meanwhile) and
   * goes on from the stored position. A linker never idles alive without trying.
   */
  private async supervise(): Promise<void> {
    for (let first = true; !this.stopping; first = false) {
      if (!first) {
        if (!(await this.acquire())) break;
        await this.advancing;
        await reloadLinking(this.d.ctx);
        this.log.info('took the linker lease back; linking resumes from the stored position');
      }
      this.lost = false;
      this.startRenewing();
      try {
        await this.run();
      } catch (err) {
        if (!this.stopping) this.log.error({ err: describeError(err) }, 'linker run failed; starting again from the stored position');
        this.lost = true;
      }
      this.stopRenewing();
      if (!this.stopping) this.log.warn('lost the linker lease; linking paused until it is taken back');
    }
  }

  /** Takes the lease (or confirms it is still this linker's), waiting while another holds it; false when stopped first. */
  private async acquire(): Promise<boolean> {
    let told = false;
    while (!this.stopping) {
      try {
        if (await this.lease.take()) {
          this.renewedAt = Date.now();
          this.d.fence?.(this.lease.token);
          return true;
        }
        if (!told) this.log.info('another linker holds this partition; waiting for its lease to lapse');
        told = true;
      } catch (err) {
        if (!told) this.log.warn({ err: describeError(err) }, 'cannot reach Redis for the linker lease; trying again');
        told = true;
      }
      await sleep(Math.min(this.leaseMs / 3, 2000));
    }
    return false;
  }

  private startRenewing(): void {
    this.leaseTimer = setInterval(() => void this.renew(), this.leaseMs / 3);
    this.leaseTimer.unref();
  }

  private stopRenewing(): void {
    if (this.leaseTimer) clearInterval(this.leaseTimer);
    this.leaseTimer = null;
  }

  private async renew(): Promise<void> {
    // Unconfirmed for a whole lease (a renewal hanging on a lost connection): it may have lapsed.
    if (Date.now() - this.renewedAt >= this.leaseMs) this.lost = true;
    if (this.renewing || this.lost) return;
    this.renewing = true;
    try {
      if (await this.lease.renew()) this.renewedAt = Date.now();
      else this.lost = true;
    } catch {
      // Unreachable: the watchdog above decides once a whole lease has passed unconfirmed.
    } finally {
      this.renewing = false;
    }
  }

  private async run(): Promise<void> {
    const { ctx, redis, keys } = this.d;
    const admit = admitWork(ctx);
    // Entries between reading and their outcome, in order, with what the worker sent.
    const order: { entry: string; body: string }[] = [];
    let inFlight = 0;
    const input = new Subject<Flow<DetectedWork>>();
    const done = new Promise<void>((resolve, reject) => {
      input.pipe(linkStages(ctx)).subscribe({
        next: (o) => {
          inFlight--;
          const { entry, body } = order.shift()!;
          if (o.status === 'rejected' && o.reason?.startsWith('STRAND_LEASE_LOST')) {
            // Fenced off: nothing was written; the entry stays for whoever holds the lease.
            this.lost = true;
            return;
          }
          // An article the linker could not store (the store refused the commit) must not
          // vanish with the queue entry: it goes to the dead-letter list with the reason.
          const notStored = o.status === 'rejected' && !o.reason?.startsWith('worker:');
          this.advancing = this.advancing
            .then(() => (notStored ? this.deadLetter(entry, o.reason ?? 'not stored', body) : undefined))
            .then(() => this.advance(entry))
            .catch((err: unknown) =>
              this.log.warn({ err: describeError(err) }, 'position not saved; the next start repeats a few articles harmlessly'),
            );
          this.outcomes.next(o);
        },
        error: reject,
        complete: resolve,
      });
    });
    const corrections = new CorrectionQueue(redis, keys);
    let position = (await redis.get(keys.linkerPosition)) ?? '0-0';
    let lastSeen = '$';
    while (!this.stopping && !this.lost) {
      try {
        if (inFlight >= IN_FLIGHT) {
          await sleep(5);
          continue;
        }
        // Corrections queued by api processes go in the linker's turn: no new article is
        // taken until those in flight are committed, then the corrections are made.
        if (await corrections.waiting()) {
          if (inFlight > 0) await sleep(5);
          else await corrections.serve((req, author) => applyCorrection(ctx, req, author));
          continue;
        }
        const next = await this.nextAnswered(position);
        if (next.length === 0) {
          // Wait for any new analysed entry (or a second), then look again.
          const r = (await this.stopSignal.race(this.d.blocking.xread('COUNT', 1, 'BLOCK', 1000, 'STREAMS', keys.analysed, lastSeen))) as
            [string, [string, string[]][]][] | null | typeof STOPPED;
          if (r === STOPPED) break;
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
          const f = row
            ? fieldMap(row[1])
            : { entry, rejected: `analysed entry ${next[i]!.analysed} missing${err ? `: ${err.message}` : ''}` };
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
    await this.advancing;
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

  private async toFlow(admit: ReturnType<typeof admitWork>, f: Record<string, string>): Promise<Flow<DetectedWork>> {
    if (f.rejected !== undefined) {
      const article = {
        id: `queue:${f.entry}`,
        outlet: '',
        url: null,
        title: '',
        published: null,
        fetched: new Date(0).toISOString(),
        language: null,
        text: '',
        contentHash: '',
        duplicateOf: null,
        source: 'queue',
      };
      return { done: { ...outcomeOf(article, 'rejected', `worker: ${f.rejected}`), duplicateOf: null } };
    }
    return admit(decodeWork(f.work!));
  }

  private async deadLetter(entry: string, error: string, body: string): Promise<void> {
    this.log.error({ entry, err: error }, 'article not stored; moved to the dead-letter list');
    await this.d.redis.xadd(this.d.keys.deadLetters, '*', 'entry', entry, 'error', `linker: ${error}`, 'article', body.slice(0, 64_000));
  }

  /** Saves the position and clears what this entry left in Redis. */
  private async advance(entry: string): Promise<void> {
    const { redis, keys } = this.d;
    const analysed = await redis.hget(keys.answered, entry);
    // The entry goes with the ones before it: what is left in intake is what waits (the api's progress reads it).
    const p = redis
      .pipeline()
      .set(keys.linkerPosition, entry)
      .hdel(keys.answered, entry)
      .xtrim(keys.intake, 'MINID', entry)
      .xdel(keys.intake, entry);
    if (analysed) p.xdel(keys.analysed, analysed);
    await p.exec();
  }
}

function sleep(ms: number): Promise<void> {
  return new Promise((r) => setTimeout(r, ms));
}
