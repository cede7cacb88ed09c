/** `strandline consolidate`: the consolidation pass (merges, then splits) on demand, over every stored event. */
import { consolidate } from '../../link/consolidate.js';
import { createRuntime } from '../../runtime.js';
import { type CommonOptions, setup } from '../common.js';
import { listenForStop } from '../stop-signals.js';

/** Runs consolidation over all events; returns the exit code (130 or 143 when a signal stopped it part-way). */
export async function consolidateCommand(opts: CommonOptions): Promise<number> {
  const { config, logger } = setup(opts);
  const rt = await createRuntime(config, logger);
  const stop = listenForStop('consolidation');
  try {
    const ids = await rt.store.recentEventIds(Number.MAX_SAFE_INTEGER);
    const storyIds = await rt.store.recentStoryIds(Number.MAX_SAFE_INTEGER);
    const { merges, splits, storyMerges, storySplits } = await consolidate(rt, ids, storyIds, stop.signal);
    const lines = [
      `${stop.received() ? `stopped by ${stop.received()} part-way; ` : ''}examined ${ids.length} event(s) and ${storyIds.length} story(ies); merged ${merges.length} event(s), split ${splits.length}, merged ${storyMerges.length} story(ies), split ${storySplits.length}`,
      ...merges.map((m) => `  merged ${m.from} -> ${m.into} (score ${m.score.toFixed(3)})`),
      ...splits.map((s) => `  split  ${s.into} off ${s.from}: ${s.moved.length} mention(s) moved (parts alike ${s.score.toFixed(3)})`),
      ...storyMerges.map((m) => `  merged story ${m.from} -> ${m.into} (score ${m.score.toFixed(3)})`),
      ...storySplits.map(
        (s) => `  split  story ${s.into} off ${s.from}: ${s.moved.length} article(s) moved (parts alike ${s.score.toFixed(3)})`,
      ),
    ];
    process.stdout.write(`${lines.join('\n')}\n`);
    return stop.exitCode(0);
  } finally {
    stop.dispose();
    await rt.close();
  }
}
