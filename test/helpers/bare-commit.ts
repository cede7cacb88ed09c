/**
 * An article commit with no sentences, mentions or events: what tests of storage mechanics
 * (document frequencies, the outbox, the log file) commit when linking is beside the point.
 */
import { canonicalUrl } from '../../src/ingest/canonical-url.js';
import type { Article } from '../../src/records.js';
import type { ArticleCommit } from '../../src/store/store.js';

/** A commit of article `id`; `article` overrides its fields, `commit` the commit's own. */
export function bareCommit(
  id: string,
  o: { article?: Partial<Article>; commit?: Partial<Omit<ArticleCommit, 'article'>> } = {},
): ArticleCommit {
  const url = o.article?.url ?? null;
  return {
    canonicalUrl: canonicalUrl(url),
    article: {
      id,
      outlet: 'O',
      url: null,
      title: 't',
      published: null,
      fetched: '2026-10-01T00:00:00.000Z',
      language: null,
      text: 'x',
      contentHash: `h-${id}`,
      duplicateOf: null,
      source: 's',
      ...o.article,
    },
    sentences: [],
    mentions: [],
    links: [],
    events: [],
    messages: [],
    idf: null,
    ...o.commit,
  };
}
