import { describe, expect, it } from 'vitest';
import { analyseArticle, splitSentences } from '../../src/text/analyse-article.js';
import { createNlp } from '../../src/text/nlp.js';
import type { Article } from '../../src/records.js';

const nlp = createNlp();

function article(text: string, published = '2026-10-15T09:00:00Z'): Article {
  return {
    id: 'a1',
    outlet: 'Test',
    url: null,
    title: 't',
    published,
    fetched: published,
    language: 'en',
    text,
    contentHash: 'h',
    duplicateOf: null,
    source: 'test',
  };
}

// News needs an abbreviation list on top of plain sentence rules: "Mr.", "Jan.", "No. 3"
// end no sentence (checks.md, Sentence boundaries; common practice).
describe('splitting sentences', () => {
  it('does not break after titles, initials or company abbreviations', () => {
    expect(splitSentences(nlp, 'Mr. J. R. Hollis of Vantmoor Ltd. said the deal was signed. Talks ended.')).toEqual([
      'Mr. J. R. Hollis of Vantmoor Ltd. said the deal was signed.',
      'Talks ended.',
    ]);
  });

  it('does not break inside decimals, dates or numbered names', () => {
    expect(splitSentences(nlp, 'Prices rose 3.5 per cent on Jan. 5 at the No. 3 pier. Trade slowed.')).toEqual([
      'Prices rose 3.5 per cent on Jan. 5 at the No. 3 pier.',
      'Trade slowed.',
    ]);
  });

  it('keeps a quotation and its attribution together', () => {
    expect(splitSentences(nlp, '"We are not leaving," she said. The crowd cheered.')).toEqual([
      '"We are not leaving," she said.',
      'The crowd cheered.',
    ]);
  });

  it('ends a sentence at a.m. or p.m. when a new clause follows, not before a weekday', () => {
    expect(splitSentences(nlp, 'The result came at 6 p.m. Work resumes on Friday.')).toEqual([
      'The result came at 6 p.m.',
      'Work resumes on Friday.',
    ]);
    expect(splitSentences(nlp, 'She spoke at 10 a.m. Monday. Then it ended.')).toEqual(['She spoke at 10 a.m. Monday.', 'Then it ended.']);
  });

  it('joins a piece that starts in lower case back to the sentence before it', () => {
    expect(splitSentences(nlp, 'The vote passed 112 to 97. the motion failed later.')).toEqual([
      'The vote passed 112 to 97. the motion failed later.',
    ]);
  });

  it('treats a blank line as a hard break even without a full stop', () => {
    expect(splitSentences(nlp, 'Bridge closed\n\nThe city shut the bridge.')).toEqual(['Bridge closed', 'The city shut the bridge.']);
  });

  it('gives each sentence its exact span in the article text', () => {
    const text = 'First one here.  Second "quoted" one!\n\n  Third after a gap.';
    const a = analyseArticle(nlp, article(text));
    expect(a.sentences.map((s) => text.slice(s.sentence.start, s.sentence.end))).toEqual(a.sentences.map((s) => s.sentence.text));
    expect(a.sentences.map((s) => s.sentence.index)).toEqual([0, 1, 2]);
  });
});

describe('reading a sentence', () => {
  const [s] = analyseArticle(
    nlp,
    article('Finance Minister Odile Varnay announced a 400 million mark fund in Vellmouth on Friday.'),
  ).sentences;

  it('finds participants, numbers with units and places', () => {
    expect(s!.participants).toContain('Finance Minister Odile Varnay');
    expect(s!.participants).toContain('400 million mark');
    expect(s!.places).toEqual(['Vellmouth']);
  });

  it('resolves the weekday against the publication date', () => {
    // 2026-10-15 is a Thursday, so the Friday before it is 2026-10-09 (Gregorian calendar).
    expect(s!.times).toEqual([{ text: 'on Friday', start: '2026-10-09', end: '2026-10-09' }]);
  });

  it('counts past-tense action verbs and event words', () => {
    expect(s!.cues.pastVerbs).toBeGreaterThanOrEqual(1);
    expect(s!.cues.eventWords).toBeGreaterThanOrEqual(1);
  });

  it('does not take a capitalised first word for a name unless the article uses it as one', () => {
    const a = analyseArticle(nlp, article('Engineers closed the breach. Police said the Dunvessel levee held.'));
    expect(a.sentences.flatMap((x) => x.participants)).not.toContain('Engineers');
    expect(a.sentences.flatMap((x) => x.participants)).not.toContain('Police');
  });

  it('yields content terms as lower-case lemmas', () => {
    const [t] = analyseArticle(nlp, article('Police arrested two men.')).sentences;
    expect(t!.terms).toEqual(expect.arrayContaining(['police', 'arrest', 'man']));
  });
});

// Definite and demonstrative noun phrases headed by an event noun refer back to a happening
// told before ("the move", "this decision"): common practice in event coreference, where such
// phrases are the anaphors of an event mention earlier in the text.
describe('noun phrases pointing back at a happening', () => {
  const backReferences = (text: string): number[] => analyseArticle(nlp, article(text)).sentences.map((x) => x.cues.backReferences);

  it('counts a definite or demonstrative phrase whose head is an event noun', () => {
    expect(backReferences('The Harrowgate council closed the bridge on Monday. The move angered traders.')).toEqual([0, 1]);
    expect(backReferences('Dock workers walked out in Vellmouth. This decision surprised the port.')).toEqual([0, 1]);
  });

  it('lets one modifier stand between the determiner and the head', () => {
    expect(backReferences('Officials said the surprise resignation shook the cabinet.')).toEqual([1]);
  });

  it('does not count a verb, a noun of no happening, or an event noun without a determiner', () => {
    expect(backReferences('The company cuts prices every spring.')).toEqual([0]);
    expect(backReferences('The bridge stood for a century.')).toEqual([0]);
    expect(backReferences('Protests spread across Vellmouth on Friday.')).toEqual([0]);
  });

  it('marks the mention built from such a sentence, and only that one', async () => {
    const { detectMentions } = await import('../../src/detect/detect-mentions.js');
    const a = analyseArticle(nlp, article('The Harrowgate council closed the bridge on Monday. The move angered traders in Vellmouth.'));
    const d = detectMentions(a, 0.5, { kind: 'sentences', indices: new Set([0, 1]) });
    expect(d.mentions.map((m) => m.refersBack === true)).toEqual([false, true]);
  });
});
