/**
 * Turns evaluation input into what the pipeline and the baselines read: Articles in
 * stream order (publication order where dates exist, then undated ones in file order),
 * the mention selection for each setting, and, for the baselines and the link-step
 * timing, the mentions with their vectors exactly as the pipeline's stages produce them.
 */
import { ARTICLE_MENTION, type MentionSelection, detectMentions } from '../detect/detect-mentions.js';
import { TfidfEmbedder } from '../embed/tfidf-embedder.js';
import { contentHash } from '../ingest/to-article.js';
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
    id: a.id, outlet: a.outlet, url: null, title: a.title, published: a.published, fetched: a.published ?? undatedTime, language: null, text,
    contentHash: contentHash(text), duplicateOf: null, source, presplit: a.sentences,
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

/** Mentions with vectors, per article in stream order, as the pipeline's stages make them. */
export function prepareMentions(nlp: Nlp, articles: readonly Article[], select: (a: Article) => MentionSelection, detectThreshold: number, hashBits: number): EmbeddedMention[][] {
  const embedder = new TfidfEmbedder(hashBits);
  return articles.map((article) => {
    const analysed = analyseArticle(nlp, article);
    const detected = detectMentions(analysed, detectThreshold, select(article));
    embedder.learn(analysed.sentences.map((s) => ({ text: s.sentence.text, terms: s.terms })));
    return detected.mentions.map((m) => ({ ...m, vector: embedder.vector(m.terms) }));
  });
}
