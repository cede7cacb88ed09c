/** `strandline forget`: erase stored text on the operator's say (one article, or all before a day). */
import { openStore } from '../../store/open-store.js';
import { StrandError } from '../../errors.js';
import { type CommonOptions, setup } from '../common.js';
import { listenForStop } from '../stop-signals.js';

/** Options of forget. */
export interface ForgetOptions extends CommonOptions {
  article?: string;
  before?: string;
}

/** Erases text; returns the exit code. */
export async function forgetCommand(opts: ForgetOptions): Promise<number> {
  if (!opts.article && !opts.before) throw new StrandError('STRAND_REQUEST_INVALID', 'give --article <id> or --before <YYYY-MM-DD>');
  if (opts.before && !/^\d{4}-\d{2}-\d{2}$/.test(opts.before)) throw new StrandError('STRAND_REQUEST_INVALID', `--before must be a day as YYYY-MM-DD, not "${opts.before}"`);
  const { config, logger } = setup(opts);
  // The configured store, so a Redis deployment erases in Redis, not in a stray SQLite file.
  const store = await openStore(config.store, logger);
  // Erasing is committed article by article; a signal ends the command within the grace period.
  const stop = listenForStop('the erasure');
  try {
    if (opts.article) {
      const found = await store.eraseArticleText(opts.article);
      process.stdout.write(found ? `erased the text of ${opts.article}\n` : `no article ${opts.article}\n`);
      if (!found) return 1;
    }
    if (opts.before) process.stdout.write(`erased the text of ${await store.eraseTextBefore(opts.before)} article(s) published before ${opts.before}\n`);
    // The operator asked for the text to go: rebuild the file so no stale copy stays on disk.
    await store.compact();
    process.stdout.write(config.store.kind === 'sqlite'
      ? 'store compacted: the erased text is off the disk\n'
      : 'erased in Redis; its snapshot and append-only files keep old values until Redis rewrites them (BGSAVE, BGREWRITEAOF)\n');
    return stop.exitCode(0);
  } finally {
    stop.dispose();
    await store.close();
  }
}
