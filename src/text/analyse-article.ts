/**
 * The text stage: splits an article into sentences and reads, for each, what later stages
 * need (content terms, participants, places, resolved times, event-ness cues), in one pass
 * over wink-nlp's tokens.
 *
 * Sentence boundaries: paragraphs (blank lines) are hard breaks; inside a paragraph
 * wink-nlp decides, and a piece that starts in lower case is joined back to the one before
 * it (wink-nlp sometimes breaks after an abbreviation it does not know, and a sentence
 * never starts in lower case in edited news; common practice).
 */
import type { Article, Sentence, SentenceAnalysis, SentenceCues, TimeExpression } from '../records.js';
import {
  BACK_POINTING_DETERMINERS,
  CALENDAR_WORDS,
  EVENT_WORDS,
  FUTURE_PHRASES,
  GENERAL_EVENT_NOUNS,
  LOCATIVE,
  MODAL_WORDS,
  OPINION_WORDS,
} from './lexicon.js';
import type { Nlp } from './nlp.js';
import { daysBetween, dayOf } from './days.js';
import { resolveTimes } from './resolve-times.js';

/** An article with its analysed sentences. */
export interface AnalysedArticle {
  article: Article;
  sentences: SentenceAnalysis[];
}

/** Token arrays of one paragraph, read from wink-nlp once. */
interface Tokens {
  /** Token spans of wink-nlp's sentences. */
  sentences: [number, number][];
  value: string[];
  lemma: string[];
  pos: string[];
  type: string[];
  stop: boolean[];
  start: number[];
  end: number[];
}

const CONTENT_POS = new Set(['NOUN', 'PROPN', 'VERB', 'ADJ', 'NUM']);
const SPEECH_VERBS = new Set(['say', 'tell', 'add', 'state', 'claim', 'note', 'write', 'ask']);
const PRESENT_FORMS = new Set(['is', 'are', 'am', "'s", "'re", "'m", 'has', 'have', 'does', 'do']);
const CONNECTORS = new Set(['of', 'and', '&']);
/** Words of a noun phrase after its determiner that the back-reference cue reads. */
const MAX_PHRASE = 3;
const UNIT_STOP = new Set(['a.m.', 'p.m.', 'am', 'pm', 'per', 'cent', 'percent']);
const DISTANT_DAYS = 365;
const FINAL_ABBREVIATIONS = new Set(['a.m.', 'p.m.', 'etc.', 'ltd.', 'inc.', 'co.', 'jr.', 'sr.', 'corp.']);

/** Splits and analyses an article. */
export function analyseArticle(nlp: Nlp, article: Article): AnalysedArticle {
  const reference = article.published ?? article.fetched;
  const read = article.presplit
    ? presplitParts(nlp, article.presplit)
    : paragraphs(article.text).map((p) => {
        const tokens = readTokens(nlp, p.text);
        return { ...p, tokens, spans: sentenceSpans(tokens) };
      });
  // The tagger takes any capitalised first word for a name ("Police said", "Engineers
  // warned"); such a word counts as a name only if the article also capitalises it mid-sentence.
  const names = new Set<string>();
  for (const { tokens, spans } of read) {
    for (const [s, e] of spans)
      for (let i = s + 1; i <= e; i++) if (tokens.pos[i] === 'PROPN' && isCapitalised(tokens.value[i]!)) names.add(tokens.value[i]!);
  }
  const sentences: SentenceAnalysis[] = [];
  for (const { text: para, offset, tokens, spans } of read) {
    // A pre-split sentence with no words still holds its index, so gold indices line up.
    if (spans.length === 0 && article.presplit)
      sentences.push(emptyAnalysis({ articleId: article.id, index: sentences.length, text: '', start: offset, end: offset }));
    for (const [s, e] of spans) {
      const start = tokens.start[s]!;
      const end = tokens.end[e]!;
      const sentence: Sentence = {
        articleId: article.id,
        index: sentences.length,
        text: para.slice(start, end),
        start: offset + start,
        end: offset + end,
      };
      sentences.push(analyseSentence(sentence, tokens, s, e, reference, names));
    }
  }
  return { article, sentences };
}

/** The text an article with pre-split sentences is stored with: one sentence per paragraph. */
export function presplitText(sentences: readonly string[]): string {
  return sentences.join('\n\n');
}

/** Pre-split sentences, each kept whole as one sentence, at their offsets in presplitText(). */
function presplitParts(nlp: Nlp, sentences: readonly string[]) {
  let offset = 0;
  return sentences.map((text) => {
    const tokens = readTokens(nlp, text);
    const part = { text, offset, tokens, spans: tokens.value.length ? ([[0, tokens.value.length - 1]] as [number, number][]) : [] };
    offset += text.length + 2;
    return part;
  });
}

/** Just the sentence strings of a text, for tools and tests. */
export function splitSentences(nlp: Nlp, text: string): string[] {
  const out: string[] = [];
  for (const { text: para } of paragraphs(text)) {
    const tokens = readTokens(nlp, para);
    for (const [s, e] of sentenceSpans(tokens)) out.push(para.slice(tokens.start[s]!, tokens.end[e]!));
  }
  return out;
}

function paragraphs(text: string): { text: string; offset: number }[] {
  const out: { text: string; offset: number }[] = [];
  const re = /\n[ \t]*\n/g;
  let last = 0;
  for (let m = re.exec(text); ; m = re.exec(text)) {
    const end = m ? m.index : text.length;
    const raw = text.slice(last, end);
    const lead = raw.length - raw.trimStart().length;
    const body = raw.trim();
    if (body !== '') out.push({ text: body, offset: last + lead });
    if (!m) break;
    last = m.index + m[0].length;
  }
  return out;
}

function readTokens(nlp: Nlp, para: string): Tokens {
  const its = nlp.its;
  const doc = nlp.readDoc(para);
  const toks = doc.tokens();
  const value = toks.out(its.value) as string[];
  const spaces = toks.out(its.precedingSpaces) as string[];
  const start: number[] = new Array(value.length);
  const end: number[] = new Array(value.length);
  // Character offsets from wink's preceding-space records; if the text and the tokens ever
  // disagree (wink normalises a few characters), fall back to searching for each token.
  let at = 0;
  for (let i = 0; i < value.length; i++) {
    at += spaces[i]!.length;
    if (para.startsWith(value[i]!, at)) {
      start[i] = at;
    } else {
      const found = para.indexOf(value[i]!, at);
      start[i] = found >= 0 ? found : at;
    }
    end[i] = start[i]! + value[i]!.length;
    at = end[i]!;
  }
  return {
    sentences: doc.sentences().out(its.span) as unknown as [number, number][],
    value,
    // wink's typings reject its.lemma on token collections, which the library supports.
    lemma: toks.out(its.lemma as never) as string[],
    pos: toks.out(its.pos) as string[],
    type: toks.out(its.type) as string[],
    stop: toks.out(its.stopWordFlag) as boolean[],
    start,
    end,
  };
}

function sentenceSpans(tokens: Tokens): [number, number][] {
  const merged: [number, number][] = [];
  for (const [s, e] of tokens.sentences.flatMap(([s, e]) => splitAfterFinalAbbreviation(tokens, s, e))) {
    const prev = merged[merged.length - 1];
    if (prev && (startsLowerCase(tokens, s, e) || onlyPunctuation(tokens, s, e))) prev[1] = e;
    else merged.push([s, e]);
  }
  return merged;
}

/**
 * wink-nlp never ends a sentence on an abbreviation's period ("at 6 p.m. Work resumed").
 * Abbreviations that often close a sentence end it when a capitalised word that starts a
 * clause (not a name, not a date) follows.
 */
function splitAfterFinalAbbreviation(t: Tokens, s: number, e: number): [number, number][] {
  const out: [number, number][] = [];
  let from = s;
  for (let i = s; i < e; i++) {
    if (!FINAL_ABBREVIATIONS.has(t.value[i]!.toLowerCase())) continue;
    const next = t.value[i + 1]!;
    // The tagger reads any capitalised word there as a name, so a name followed by a verb
    // ("p.m. Police said") is taken as the subject of a new sentence.
    const startsClause = t.pos[i + 1] !== 'PROPN' || t.pos[i + 2] === 'VERB' || t.pos[i + 2] === 'AUX';
    if (isCapitalised(next) && startsClause && !CALENDAR_WORDS.has(next.toLowerCase())) {
      out.push([from, i]);
      from = i + 1;
    }
  }
  out.push([from, e]);
  return out;
}

function startsLowerCase(tokens: Tokens, s: number, e: number): boolean {
  for (let i = s; i <= e; i++) {
    if (tokens.type[i] === 'punctuation') continue;
    return /^\p{Ll}/u.test(tokens.value[i]!);
  }
  return false;
}

function onlyPunctuation(tokens: Tokens, s: number, e: number): boolean {
  for (let i = s; i <= e; i++) if (tokens.type[i] !== 'punctuation') return false;
  return true;
}

function analyseSentence(
  sentence: Sentence,
  t: Tokens,
  s: number,
  e: number,
  reference: string,
  names: ReadonlySet<string>,
): SentenceAnalysis {
  const terms: string[] = [];
  const participants: string[] = [];
  const places: string[] = [];
  let pastVerbs = 0;
  let eventWords = 0;
  let modalOrFuture = 0;
  let opinionWords = 0;
  let backReferences = 0;
  const base = t.start[s]!;
  const text = sentence.text;

  for (let i = s; i <= e; i++) {
    const lower = t.value[i]!.toLowerCase();
    const lemma = t.lemma[i]!.toLowerCase();
    const pos = t.pos[i]!;
    if (CONTENT_POS.has(pos) && !t.stop[i] && (t.type[i] === 'word' || t.type[i] === 'number')) terms.push(pos === 'PROPN' ? lower : lemma);
    if ((pos === 'VERB' || pos === 'AUX') && isPast(lower, lemma) && !SPEECH_VERBS.has(lemma)) pastVerbs++;
    if ((pos === 'VERB' || pos === 'NOUN') && EVENT_WORDS.has(lemma)) eventWords++;
    if (MODAL_WORDS.has(lower)) modalOrFuture++;
    if (OPINION_WORDS.has(lemma)) opinionWords++;
    if (BACK_POINTING_DETERMINERS.has(lower) && pointsBackAtEvent(t, i, e)) backReferences++;

    if (pos === 'PROPN' && isCapitalised(t.value[i]!) && !CALENDAR_WORDS.has(lower)) {
      let j = i;
      while (
        j < e &&
        (continuesName(t, j + 1) || (CONNECTORS.has(t.value[j + 1]!.toLowerCase()) && j + 1 < e && continuesName(t, j + 2)))
      ) {
        j += CONNECTORS.has(t.value[j + 1]!.toLowerCase()) ? 2 : 1;
      }
      const phrase = text.slice(t.start[i]! - base, t.end[j]! - base);
      const doubtful = i === s && j === i && !names.has(t.value[i]!);
      if (!doubtful) (isAfterLocative(t, i, s) ? places : participants).push(phrase);
      // Also count the content terms inside the phrase we are about to skip.
      for (let k = i + 1; k <= j; k++) if (t.pos[k] === 'PROPN') terms.push(t.value[k]!.toLowerCase());
      i = j;
    } else if (pos === 'NUM' && !/^(1[89]|20)\d\d$/.test(t.value[i]!)) {
      let j = i;
      while (j < e && t.pos[j + 1] === 'NUM') j++;
      if (j < e && t.pos[j + 1] === 'NOUN' && !UNIT_STOP.has(t.value[j + 1]!.toLowerCase())) {
        participants.push(text.slice(t.start[i]! - base, t.end[j + 1]! - base).toLowerCase());
      }
    }
  }

  const future = FUTURE_PHRASES.test(text);
  const times = resolveTimes(text, reference, future);
  const refDay = dayOf(reference);
  const cues: SentenceCues = {
    pastVerbs,
    eventWords,
    modalOrFuture: modalOrFuture + (future ? 1 : 0),
    opinionWords,
    isQuestion: text.trimEnd().endsWith('?'),
    quoteShare: quoteShare(text),
    distantPast: times.length > 0 && times.every((x) => isDistant(x, refDay)),
    tokens: e - s + 1,
    backReferences,
  };
  return { sentence, terms, participants: unique(participants), places: unique(places), times, cues };
}

function emptyAnalysis(sentence: Sentence): SentenceAnalysis {
  return {
    sentence,
    terms: [],
    participants: [],
    places: [],
    times: [],
    cues: {
      pastVerbs: 0,
      eventWords: 0,
      modalOrFuture: 0,
      opinionWords: 0,
      isQuestion: false,
      quoteShare: 0,
      distantPast: false,
      tokens: 0,
      backReferences: 0,
    },
  };
}

function isPast(lower: string, lemma: string): boolean {
  if (lower === lemma || PRESENT_FORMS.has(lower) || lower.endsWith('ing')) return false;
  if (lower === `${lemma}s` || lower === `${lemma}es` || (lemma.endsWith('y') && lower === `${lemma.slice(0, -1)}ies`)) return false;
  return true;
}

function isCapitalised(word: string): boolean {
  return /^\p{Lu}/u.test(word);
}

function continuesName(t: Tokens, k: number): boolean {
  // A possessive apostrophe inside a name ("Dock Workers' Guild") does not end it.
  if (t.value[k] === "'" && t.end[k - 1] === t.start[k] && t.pos[k + 1] === 'PROPN') return true;
  return t.pos[k] === 'PROPN' && isCapitalised(t.value[k]!) && !CALENDAR_WORDS.has(t.value[k]!.toLowerCase());
}

/**
 * Whether the determiner at `i` opens a noun phrase headed by an event noun ("the deal",
 * "this surprise move"). The head is the last of the nouns and adjectives that follow (at
 * most three), so in "the company cuts prices" it is "prices", whatever the tagger made of
 * "cuts".
 */
function pointsBackAtEvent(t: Tokens, i: number, e: number): boolean {
  let head = i;
  while (head < e && head - i < MAX_PHRASE && (t.pos[head + 1] === 'ADJ' || t.pos[head + 1] === 'NOUN')) head++;
  const runsOn = head < e && (t.pos[head + 1] === 'NOUN' || t.pos[head + 1] === 'ADJ');
  if (head === i || t.pos[head] !== 'NOUN' || runsOn) return false;
  const lemma = t.lemma[head]!.toLowerCase();
  return EVENT_WORDS.has(lemma) || GENERAL_EVENT_NOUNS.has(lemma);
}

function isAfterLocative(t: Tokens, i: number, s: number): boolean {
  let k = i - 1;
  while (k >= s && (t.pos[k] === 'DET' || t.pos[k] === 'ADJ')) k--;
  return k >= s && LOCATIVE.has(t.value[k]!.toLowerCase());
}

function isDistant(x: TimeExpression, refDay: string): boolean {
  return daysBetween(x.end, refDay) > DISTANT_DAYS;
}

/** Share of the sentence's characters inside double quotation marks. */
function quoteShare(text: string): number {
  let inside = 0;
  const re = /["\u201c]([^"\u201d]*)["\u201d]/g;
  for (let m = re.exec(text); m; m = re.exec(text)) inside += m[1]!.length;
  return text.length === 0 ? 0 : inside / text.length;
}

function unique(xs: string[]): string[] {
  return [...new Set(xs)];
}
