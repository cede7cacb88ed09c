/** `strandline forget`: erase stored text on the operator's say (one article, or all before a day). */
import { canonicalUrl } from '../../ingest/canonical-url.js';
import { openStore } from '../../store/open-store.js';
import type { Store } from '../../store/store.js';
import { StrandError } from '../../errors.js';
import { type CommonOptions, setup } from '../common.js';
import { listenForStop } from '../stop-signals.js';

/** Options of forget. */
export interface ForgetOptions extends CommonOptions {
  article?: string;
  before?: string;
}

/**
 * The stored id an operator means: the id itself (as the API and the page show it), the
 * same id URL-encoded (as in an API path), or the article's URL (any link that reaches it).
 */
async function storedId(store: Store, given: string): Promise<string | null> {
  const tries = [given];
  try {
    tries.push(decodeURIComponent(given));
  } catch {
    // Not URL-encoded: the id as given is all there is.
  }
  for (const id of tries) if (await store.getArticle(id)) return id;
  const canonical = canonicalUrl(given);
  return canonical ? store.findByUrl(canonical) : null;
}

/** Erases text; returns the exit code. */
export async function forgetCommand(opts: ForgetOptions): Promise<number> {
  if (!opts.article && !opts.before) throw new StrandError('STRAND_REQUEST_INVALID', 'give --article <id> or --before <YYYY-MM-DD>');
  if (opts.before && !/^\d{4}-\d{2}-\d{2}$/.test(opts.before))
    throw new StrandError('STRAND_REQUEST_INVALID', `--before must be a day as YYYY-MM-DD, not "${opts.before}"`);
  const { config, logger } = setup(opts);
  // The configured store, so a Redis deployment erases in Redis, not in a stray SQLite file.
  const store = await openStore(config.store, logger);
  // Erasing is committed article by article; a signal ends the command within the grace period.
  const stop = listenForStop('the erasure');
  try {
    if (opts.article) {
      const id = await storedId(store, opts.article);
      const found = id !== null && (await store.eraseArticleText(id));
      if (!found) {
        process.stderr.write(`strandline: no stored article ${opts.article} (give its id as the API shows it, or its URL)\n`);
        return 1;
      }
      process.stdout.write(`erased the text of ${id}\n`);
    }
    if (opts.before)
      process.stdout.write(`erased the text of ${await store.eraseTextBefore(opts.before)} article(s) published before ${opts.before}\n`);
    // The operator asked for the text to go: rebuild the file so no stale copy stays on disk.
    await store.compact();
    process.stdout.write(
      config.store.kind === 'sqlite'
        ? 'store compacted: the erased text is off the disk\n'
        : 'erased in Redis; its snapshot and append-only files keep old values until Redis rewrites them (BGSAVE, BGREWRITEAOF)\n',
    );
    return stop.exitCode(0);
  } finally {
    stop.dispose();
    await store.close();
  }
}
