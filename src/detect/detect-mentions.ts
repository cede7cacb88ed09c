/** The detect stage: scores every sentence and keeps those at or above the threshold as mentions. */
import type { AnalysedArticle } from '../text/analyse-article.js';
import type { Mention } from '../records.js';
import { scoreEventSentence } from './score-event-sentence.js';

/** An analysed article with every sentence's event-ness and the mentions kept. */
export interface DetectedArticle extends AnalysedArticle {
  eventness: number[];
  mentions: Mention[];
}

/** Scores sentences and builds Mention records for those at or above `threshold`. */
export function detectMentions(a: AnalysedArticle, threshold: number): DetectedArticle {
  const published = a.article.published ?? a.article.fetched;
  const eventness = a.sentences.map(scoreEventSentence);
  const mentions: Mention[] = [];
  a.sentences.forEach((s, i) => {
    if (eventness[i]! < threshold) return;
    mentions.push({
      articleId: a.article.id,
      sentenceIndex: s.sentence.index,
      text: s.sentence.text,
      outlet: a.article.outlet,
      published,
      eventness: eventness[i]!,
      participants: s.participants,
      places: s.places,
      times: s.times,
      terms: s.terms,
      isCopy: a.article.duplicateOf !== null,
    });
  });
  return { ...a, eventness, mentions };
}
