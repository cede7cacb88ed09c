/** `strandline forget`: erase stored text on the operator's say (one article, or all before a day). */
import { openSqliteStore } from '../../store/sqlite/sqlite-store.js';
import { StrandError } from '../../errors.js';
import { type CommonOptions, setup } from '../common.js';

/** Options of forget. */
export interface ForgetOptions extends CommonOptions {
  article?: string;
  before?: string;
}

/** Erases text; returns the exit code. */
export async function forgetCommand(opts: ForgetOptions): Promise<number> {
  if (!opts.article && !opts.before) throw new StrandError('STRAND_REQUEST_INVALID', 'give --article <id> or --before <YYYY-MM-DD>');
  if (opts.before && !/^\d{4}-\d{2}-\d{2}$/.test(opts.before)) throw new StrandError('STRAND_REQUEST_INVALID', `--before must be a day as YYYY-MM-DD, not "${opts.before}"`);
  const { config } = setup(opts);
  const store = openSqliteStore(config.store.path);
  try {
    if (opts.article) {
      const found = await store.eraseArticleText(opts.article);
      process.stdout.write(found ? `erased the text of ${opts.article}\n` : `no article ${opts.article}\n`);
      if (!found) return 1;
    }
    if (opts.before) process.stdout.write(`erased the text of ${await store.eraseTextBefore(opts.before)} article(s) published before ${opts.before}\n`);
    return 0;
  } finally {
    await store.close();
  }
}
