/** `strandline consolidate`: the consolidation pass on demand, over every stored event. */
import { consolidate } from '../../pipeline.js';
import { createRuntime } from '../../runtime.js';
import { type CommonOptions, setup } from '../common.js';

/** Runs consolidation over all events; returns the exit code. */
export async function consolidateCommand(opts: CommonOptions): Promise<number> {
  const { config, logger } = setup(opts);
  const rt = await createRuntime(config, logger);
  try {
    const ids = await rt.store.recentEventIds(Number.MAX_SAFE_INTEGER);
    const merges = await consolidate(rt, ids);
    process.stdout.write(`examined ${ids.length} event(s); merged ${merges.length}${merges.length ? ':' : ''}\n${merges.map((m) => `  ${m.from} -> ${m.into} (score ${m.score.toFixed(3)})`).join('\n')}${merges.length ? '\n' : ''}`);
    return 0;
  } finally {
    await rt.close();
  }
}
