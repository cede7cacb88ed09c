/** The detect stage: scores every sentence and keeps those at or above the threshold as mentions. */
import type { AnalysedArticle } from '../text/analyse-article.js';
import type { Mention } from '../records.js';
import { scoreEventSentence } from './score-event-sentence.js';

/** An analysed article with every sentence's event-ness and the mentions kept. */
export interface DetectedArticle extends AnalysedArticle {
  eventness: number[];
  mentions: Mention[];
}

/**
 * Which sentences become mentions: those the scorer puts at or above the threshold (live
 * use), exactly the given ones (evaluation with gold mentions), or the whole article as
 * one mention (evaluation of article-level gold).
 */
export type MentionSelection = { kind: 'threshold' } | { kind: 'sentences'; indices: ReadonlySet<number> } | { kind: 'article' };

/** The sentence index an article-level mention carries. */
export const ARTICLE_MENTION = -1;
/** Sentences of the lead whose times date an article-level mention. */
const LEAD_SENTENCES = 2;

/** Scores sentences and builds Mention records for the selected ones. */
export function detectMentions(
  a: AnalysedArticle,
  threshold: number,
  selection: MentionSelection = { kind: 'threshold' },
): DetectedArticle {
  const published = a.article.published ?? a.article.fetched;
  const eventness = a.sentences.map(scoreEventSentence);
  if (selection.kind === 'article')
    return { ...a, eventness, mentions: a.sentences.length ? [articleMention(a, eventness, published)] : [] };
  const mentions: Mention[] = [];
  a.sentences.forEach((s, i) => {
    if (selection.kind === 'threshold' ? eventness[i]! < threshold : !selection.indices.has(s.sentence.index)) return;
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
      ...(s.cues.backReferences > 0 ? { refersBack: true } : {}),
    });
  });
  return { ...a, eventness, mentions };
}

/** The whole article as one mention: all its terms and names, dated by its lead. */
function articleMention(a: AnalysedArticle, eventness: number[], published: string): Mention {
  const unique = (xs: string[]) => [...new Set(xs)];
  return {
    articleId: a.article.id,
    sentenceIndex: ARTICLE_MENTION,
    text: a.article.title || a.sentences[0]!.sentence.text,
    outlet: a.article.outlet,
    published,
    eventness: Math.max(...eventness),
    participants: unique(a.sentences.flatMap((s) => s.participants)),
    places: unique(a.sentences.flatMap((s) => s.places)),
    times: a.sentences.slice(0, LEAD_SENTENCES).flatMap((s) => s.times),
    terms: a.sentences.flatMap((s) => s.terms),
    isCopy: a.article.duplicateOf !== null,
  };
}
