// How a link's score and evidence read on the page, said in words.
import { el, scoreBar } from './dom.js';

/** The evidence of one link, in words. */
export function evidenceText(ev) {
  if (ev.opened) {
    const near = ev.nearest
      ? `; the nearest known event scored ${ev.nearest.score.toFixed(2)}, short of the ${ev.nearest.bar.toFixed(2)} it needed`
      : '';
    return `opened an event: the first sentence seen reporting it (that event may since have been merged into this one)${near}`;
  }
  const parts = [`similarity ${ev.similarity.toFixed(2)}`, `time gap ${ev.timeGapDays} d (×${ev.timeDecay.toFixed(2)})`];
  const shared = [...ev.sharedParticipants, ...ev.sharedPlaces];
  if (shared.length) parts.push(`shared names: ${shared.join(', ')} (+${ev.overlapBonus.toFixed(2)})`);
  if (ev.conflictingNames) parts.push('names differ: each names people or places, none in common');
  if (ev.crossStory) parts.push('across stories');
  if (ev.refersBack)
    parts.push(
      'the sentence points back at a happening ("the move") its article told before: a guess, not counted among the event\'s sentences',
    );
  if (ev.bar !== undefined) parts.push(`needed ${ev.bar.toFixed(2)}`);
  if (ev.correctedBy) parts.push(`placed by an analyst (${ev.correctedBy})`);
  return parts.join(' · ');
}

/** A link's score with what it means: an opening sentence's score is its event-ness, not a match. */
export function scoreLine(score, ev, rank = 0) {
  const what = ev.opened ? 'event-ness' : 'link score';
  return el(
    'div',
    { class: 'evidence' },
    scoreBar(score, what),
    el('span', { class: 'score-what' }, `${what} ${score.toFixed(2)}`),
    ev.refersBack ? ' (an event this sentence refers back to)' : rank > 0 ? ' (a further event this sentence reports)' : '',
    ` · ${evidenceText(ev)}`,
  );
}
