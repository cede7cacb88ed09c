/**
 * The progress of a replay an api process queued for the scale-out roles. The work happens
 * in the worker and linker processes, so the api process reads progress from what they
 * leave behind: entries still waiting in the queue, articles stored and dead letters added
 * since the replay was queued. (Counting only its own work, it used to report "finished,
 * 0 processed" while the others were still linking.)
 */
import type { IngestStatus, QueueView } from '../status.js';
import type { EventQueries } from '../store/store.js';

export class QueuedReplay {
  private started: { total: number; storedBefore: number; deadBefore: number } | null = null;

  constructor(
    private readonly queue: Pick<QueueView, 'depth'>,
    private readonly store: Pick<EventQueries, 'counts'>,
  ) {}

  /** Notes the starting point; call just before the replay's articles are queued. */
  async begin(total: number): Promise<void> {
    const [counts, depth] = await Promise.all([this.store.counts(), this.queue.depth()]);
    this.started = { total, storedBefore: counts.articles, deadBefore: depth.deadLetters };
  }

  /**
   * Idle before a replay; replaying while entries wait to be analysed or linked (pushed
   * articles queued meanwhile wait with them); finished once none does.
   */
  async status(): Promise<IngestStatus> {
    const s = this.started;
    if (!s) return { state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 };
    const [counts, depth] = await Promise.all([this.store.counts(), this.queue.depth()]);
    const waiting = Math.min(s.total, depth.intake);
    return {
      state: waiting > 0 ? 'replaying' : 'finished',
      processed: s.total - waiting,
      total: s.total,
      stored: Math.max(0, counts.articles - s.storedBefore),
      rejected: Math.max(0, depth.deadLetters - s.deadBefore),
    };
  }
}
