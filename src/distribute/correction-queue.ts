/**
 * Corrections in a scale-out deployment: an api process cannot change the linker's memory,
 * so it queues the correction in Redis and waits for its answer; the linker takes queued
 * corrections in its turn (with no article mid-link) and answers each with the record or
 * the refusal.
 */
import { randomUUID } from 'node:crypto';
import { ERROR_CODES, StrandError, type ErrorCode, describeError, isStrandError } from '../errors.js';
import type { CorrectionAuthor, CorrectionRequest } from '../link/corrections.js';
import type { CorrectionRecord } from '../store/store.js';
import type { RedisClient } from '../store/redis/connect.js';
import type { Keyspace } from '../store/redis/keys.js';

/** Failures of the store or the lease, after which a correction is tried again rather than answered. */
const STAYS_QUEUED: readonly ErrorCode[] = ['STRAND_STORE_FAILED', 'STRAND_STORE_UNAVAILABLE', 'STRAND_LEASE_LOST'];

/** How long an answer is kept for the api process that waits for it, seconds. */
const ANSWER_TTL_S = 600;
const POLL_MS = 50;

interface Queued {
  id: string;
  req: CorrectionRequest;
  author: CorrectionAuthor;
}

type Answer = { record: CorrectionRecord } | { error: { code: string; message: string } };

export class CorrectionQueue {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
  ) {}

  /** Queues a correction and waits for the linker's answer (api side). */
  async submit(req: CorrectionRequest, author: CorrectionAuthor, waitMs = 10_000): Promise<CorrectionRecord> {
    const id = randomUUID();
    await this.redis.rpush(this.k.correctionRequests, JSON.stringify({ id, req, author } satisfies Queued));
    for (const until = Date.now() + waitMs; Date.now() < until;) {
      const got = await this.redis.get(this.k.correctionAnswer(id));
      if (got !== null) {
        const a = JSON.parse(got) as Answer;
        if ('record' in a) return a.record;
        const code = (a.error.code in ERROR_CODES ? a.error.code : 'STRAND_STORE_FAILED') as ErrorCode;
        throw new StrandError(code, a.error.message);
      }
      await new Promise((r) => setTimeout(r, POLL_MS));
    }
    throw new StrandError(
      'STRAND_STOPPED',
      'the linker has not taken the correction yet (it is busy or not running); it stays queued and is made when the linker takes it: see /api/corrections',
    );
  }

  /** True when corrections wait (linker side). */
  async waiting(): Promise<boolean> {
    return (await this.redis.llen(this.k.correctionRequests)) > 0;
  }

  /** Takes every queued correction in order, makes each and answers it (linker side). */
  async serve(apply: (req: CorrectionRequest, author: CorrectionAuthor) => Promise<CorrectionRecord>): Promise<void> {
    for (;;) {
      const raw = await this.redis.lindex(this.k.correctionRequests, 0);
      if (raw === null) return;
      let q: Queued | null = null;
      let answer: Answer;
      try {
        q = JSON.parse(raw) as Queued;
      } catch {
        answer = { error: { code: 'STRAND_REQUEST_INVALID', message: 'the queued correction is not readable' } };
      }
      if (q !== null) {
        try {
          answer = { record: await apply(q.req, q.author) };
        } catch (err) {
          // The store away or the lease lost: it stays queued, to be made on a later turn.
          if (STAYS_QUEUED.some((code) => isStrandError(err, code))) throw err;
          // Anything else is answered, so that one correction never holds up the linker.
          answer = isStrandError(err)
            ? { error: { code: err.code, message: err.message } }
            : { error: { code: 'STRAND_STORE_FAILED', message: `the correction could not be made: ${describeError(err)}` } };
        }
      }
      // Answered, then taken off the queue: a crash between the two makes it again, which is
      // refused (nothing to move) rather than done twice.
      if (q !== null) await this.redis.set(this.k.correctionAnswer(q.id), JSON.stringify(answer!), 'EX', ANSWER_TTL_S);
      await this.redis.lpop(this.k.correctionRequests);
    }
  }
}
