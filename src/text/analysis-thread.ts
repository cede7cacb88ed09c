/**
 * The body of an analysis thread: one wink-nlp model per thread, one article per task.
 * Loaded by piscina from src/text/analysis-pool.ts; never imported by the main thread.
 */
import type { Article } from '../records.js';
import { type AnalysedArticle, analyseArticle } from './analyse-article.js';
import { createNlp } from './nlp.js';

const nlp = createNlp();

/** `null` is the start-up probe: answering it proves the model loaded. */
export default function analyse(article: Article | null): AnalysedArticle | null {
  return article ? analyseArticle(nlp, article) : null;
}
