/**
 * Turns evaluation input into what the link stage and the baselines read: Articles in
 * stream order (publication order where dates exist, then undated ones in file order), the
 * mention selection for each setting, the articles analysed and their mentions detected
 * once (the text stage is the costly part, and the same at every threshold), and, for the
 * baselines, each mention with a plain TF-IDF vector.
 */
import type { Config } from '../config/schema.js';
import { ARTICLE_MENTION, type MentionSelection, detectMentions } from '../detect/detect-mentions.js';
import type { Embedder } from '../embed/embedder.js';
import { TfidfEmbedder } from '../embed/tfidf-embedder.js';
import { contentHash } from '../ingest/to-article.js';
import type { DetectedWork } from '../pipeline/index.js';
import type { Article, EmbeddedMention } from '../records.js';
import { analyseArticle, presplitText } from '../text/analyse-article.js';
import type { Nlp } from '../text/nlp.js';
import type { EvalArticle, EvalInput } from './eval-input.js';

/** Gold mentions (the gold sentences) or predicted mentions (the event-sentence scorer decides). */
export type Setting = 'gold' | 'predicted';

/** Key of a mention: `article#sentence` (`article#-1` for a whole article). */
export const mentionKey = (article: string, sentence: number | null): string => `${article}#${sentence ?? ARTICLE_MENTION}`;

/** The input's articles as pipeline Articles, in stream order. */
export function toArticles(input: EvalInput, source: string, undatedTime: string): Article[] {
  return input.articles
    .map((a, i) => ({ a, i }))
    .sort((x, y) => order(x.a, y.a) || x.i - y.i)
    .map(({ a }) => toArticle(a, source, undatedTime));
}

function order(x: EvalArticle, y: EvalArticle): number {
  if (x.published && y.published) return x.published.localeCompare(y.published);
  if (x.published) return -1;
  if (y.published) return 1;
  return 0;
}

function toArticle(a: EvalArticle, source: string, undatedTime: string): Article {
  const text = presplitText(a.sentences);
  return {
    id: a.id,
    outlet: a.outlet,
    url: null,
    title: a.title,
    published: a.published,
    fetched: a.published ?? undatedTime,
    language: null,
    text,
    contentHash: contentHash(text),
    duplicateOf: null,
    source,
    presplit: a.sentences,
  };
}

/** Which sentences of an article are mentions in a setting. */
export function selector(input: EvalInput, setting: Setting): (a: Article) => MentionSelection {
  if (input.level === 'article') {
    const labelled = new Set(input.gold.map((g) => g.article));
    // With article-level gold every article is a candidate mention when predicting.
    return (a) => (setting === 'predicted' || labelled.has(a.id) ? { kind: 'article' } : { kind: 'sentences', indices: new Set() });
  }
  if (setting === 'predicted') return () => ({ kind: 'threshold' });
  const bySentence = new Map<string, Set<number>>();
  for (const g of input.gold) bySentence.set(g.article, (bySentence.get(g.article) ?? new Set()).add(g.sentence!));
  return (a) => ({ kind: 'sentences', indices: bySentence.get(a.id) ?? new Set() });
}

/**
 * Every article analysed and its mentions detected, in stream order, as the text stages
 * make them. A model without stream-learned statistics (a transformer) embeds the
 * mentions here, once: every threshold of the sweep then reuses the vectors.
 */
export async function detectArticles(
  nlp: Nlp,
  articles: readonly Article[],
  select: (a: Article) => MentionSelection,
  config: Readonly<Config>,
  embedder: Embedder,
): Promise<DetectedWork[]> {
  const detected = articles.map((article) => detectMentions(analyseArticle(nlp, article), config.detect.threshold, select(article)));
  if (embedder.learn) return detected;
  const vectors = await embedder.embed(detected.flatMap((d) => d.mentions));
  let at = 0;
  return detected.map((d) => ({ ...d, vectors: vectors.slice(at, (at += d.mentions.length)) }));
}

/**
 * Each article's mentions with plain TF-IDF vectors (unigrams, smoothed idf, learned in
 * stream order over every sentence): what the baselines compare, the standard vectors of
 * the trade rather than the linker's own settings.
 */
export function baselineMentions(detected: readonly DetectedWork[], hashBits: number): EmbeddedMention[][] {
  const embedder = new TfidfEmbedder(hashBits);
  return detected.map((d) => {
    embedder.learn(d.sentences.map((s) => ({ text: s.sentence.text, terms: s.terms })));
    return d.mentions.map((m) => ({ ...m, vector: embedder.vector(m.terms) }));
  });
}
