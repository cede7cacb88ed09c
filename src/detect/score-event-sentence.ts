/**
 * The event-sentence scorer: how likely a sentence is to report a concrete event (an
 * action at a time and place, with participants) rather than background, opinion,
 * a forecast or a quotation. A logistic combination of surface cues; the weights are set
 * by hand from what the cues mean, not fitted to any corpus:
 *
 *   past-tense action verbs and event words   raise the score (something happened)
 *   a resolved time expression, participants  raise it (when, who, where)
 *   modal / future phrasing, opinion words    lower it (may happen, someone thinks)
 *   a question, mostly-quoted text            lower it (nothing asserted as fact)
 *   only long-past dates ("in 2017")          lower it (background, not news)
 */
import type { SentenceAnalysis } from '../records.js';

const W = {
  bias: -2.4,
  anyPast: 1.7,
  extraPast: 0.25,
  eventWord: 0.6,
  time: 0.8,
  participant: 0.35,
  place: 0.3,
  modal: -1.6,
  opinion: -1.0,
  question: -2.5,
  quoted: -1.8,
  distantPast: -2.0,
  short: -1.0,
} as const;

/** Event-ness in [0, 1] from the sentence's cues. */
export function scoreEventSentence(s: SentenceAnalysis): number {
  const c = s.cues;
  let z = W.bias;
  if (c.pastVerbs > 0) z += W.anyPast + W.extraPast * Math.min(c.pastVerbs - 1, 2);
  z += W.eventWord * Math.min(c.eventWords, 3);
  if (s.times.length > 0 && !c.distantPast) z += W.time;
  z += W.participant * Math.min(s.participants.length, 3);
  z += W.place * Math.min(s.places.length, 2);
  if (c.modalOrFuture > 0) z += W.modal;
  if (c.opinionWords > 0) z += W.opinion;
  if (c.isQuestion) z += W.question;
  if (c.quoteShare > 0.5) z += W.quoted;
  if (c.distantPast) z += W.distantPast;
  if (c.tokens < 5) z += W.short;
  return 1 / (1 + Math.exp(-z));
}
