/** `strandline consolidate`: the consolidation pass (merges, then splits) on demand, over every stored event. */
import { consolidate } from '../../pipeline.js';
import { createRuntime } from '../../runtime.js';
import { type CommonOptions, setup } from '../common.js';

/** Runs consolidation over all events; returns the exit code. */
export async function consolidateCommand(opts: CommonOptions): Promise<number> {
  const { config, logger } = setup(opts);
  const rt = await createRuntime(config, logger);
  try {
    const ids = await rt.store.recentEventIds(Number.MAX_SAFE_INTEGER);
    const { merges, splits } = await consolidate(rt, ids);
    const lines = [
      `examined ${ids.length} event(s); merged ${merges.length}, split ${splits.length}`,
      ...merges.map((m) => `  merged ${m.from} -> ${m.into} (score ${m.score.toFixed(3)})`),
      ...splits.map((s) => `  split  ${s.into} off ${s.from}: ${s.moved.length} mention(s) moved (parts alike ${s.score.toFixed(3)})`),
    ];
    process.stdout.write(`${lines.join('\n')}\n`);
    return 0;
  } finally {
    await rt.close();
  }
}
