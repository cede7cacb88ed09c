/**
 * The Redis store's corrections: each committed by one script (commit-correction.lua), the
 * records in a hash in the order made, the undo of each kept beside it.
 */
import { StrandError } from '../../errors.js';
import type { CorrectionCommit, CorrectionRecord, Corrections, StoryUnmergeCommit, StoryUnsplitCommit } from '../store.js';
import type { RedisClient } from './connect.js';
import type { Keyspace } from './keys.js';

/** How the store turns each commit into a script call (redis-store.ts, which builds every payload). */
export interface CorrectionScripts {
  commit(c: CorrectionCommit): Promise<void>;
  unmerge(u: StoryUnmergeCommit): Promise<void>;
  unsplit(u: StoryUnsplitCommit): Promise<void>;
}

export class RedisCorrections implements Corrections {
  constructor(
    private readonly redis: RedisClient,
    private readonly k: Keyspace,
    private readonly scripts: CorrectionScripts,
  ) {}

  async commitCorrection(c: CorrectionCommit): Promise<void> {
    await this.scripts.commit(c);
  }

  async commitStoryUnmerge(u: StoryUnmergeCommit): Promise<void> {
    await this.scripts.unmerge(u);
  }

  async commitStoryUnsplit(u: StoryUnsplitCommit): Promise<void> {
    await this.scripts.unsplit(u);
  }

  async listCorrections(limit: number, offset: number): Promise<{ total: number; corrections: CorrectionRecord[] }> {
    const [total, ids] = await Promise.all([
      this.redis.zcard(this.k.correctionOrder),
      this.redis.zrevrange(this.k.correctionOrder, offset, offset + limit - 1),
    ]);
    return { total, corrections: await this.read(ids) };
  }

  async getCorrection(id: string): Promise<CorrectionRecord | null> {
    return (await this.read([id]))[0] ?? null;
  }

  private async read(ids: readonly string[]): Promise<CorrectionRecord[]> {
    if (ids.length === 0) return [];
    const [data, undone] = await Promise.all([
      this.redis.hmget(this.k.corrections, ...ids),
      this.redis.hmget(this.k.correctionUndone, ...ids),
    ]);
    return ids.flatMap((_, i) => {
      const d = data[i];
      if (!d) return [];
      try {
        return [{ ...(JSON.parse(d) as CorrectionRecord), undoneBy: undone[i] ?? null }];
      } catch (err) {
        throw new StrandError('STRAND_STORE_FAILED', `correction ${ids[i]} is not readable`, { cause: err });
      }
    });
  }
}
