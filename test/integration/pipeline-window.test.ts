import { from, lastValueFrom, tap, toArray } from 'rxjs';
import { describe, expect, it } from 'vitest';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { runPipeline } from '../../src/pipeline/index.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { testConfig, testRuntime } from '../helpers/runtime.js';

describe('articles between admission and their outcome', () => {
  it('stay within a window when the store is slower than the source, so a large feed never piles up in memory', async () => {
    const rt = await testRuntime();
    const articles = (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
    // A slow store: every group commit takes 30 ms.
    const commit = rt.store.commitArticles.bind(rt.store);
    rt.store.commitArticles = async (cs) => {
      await new Promise((r) => setTimeout(r, 30));
      return commit(cs);
    };
    let detected = 0;
    let out = 0;
    let most = 0;
    const outcomes = await lastValueFrom(
      runPipeline(from(articles), {
        ...rt,
        // Asked once per article at detection, after its analysis: counts the articles in hand.
        selectMentions: () => {
          detected++;
          most = Math.max(most, detected - out);
          return { kind: 'threshold' };
        },
      }).pipe(
        tap(() => out++),
        toArray(),
      ),
    );
    await rt.close();
    expect(outcomes.filter((o) => o.status === 'stored')).toHaveLength(101);
    // Analysis on the main thread: the window is two groups of 32. Without it, all 101.
    expect(most).toBeLessThanOrEqual(64);
    expect(most).toBeGreaterThan(1);
  });
});
