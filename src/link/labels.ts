/**
 * How events are labelled, in one place: the label drawn from a sentence, the label of an
 * event whose text was erased, and the relabelling when the sentence a label came from goes
 * (moved by a split, erased under retention). The Redis store's scripts repeat the last rule
 * in Lua (lib.lua), because they relabel inside their own atomic commit.
 */

/** The label of an event whose every sentence has had its text erased. */
export const ERASED_LABEL = '(text erased under the retention policy)';

/** An event's label drawn from a sentence: the sentence itself, or its start cut at a word with an ellipsis. */
export function labelFrom(text: string): string {
  if (text.length <= 160) return text;
  const cut = text.slice(0, 157);
  return `${cut.slice(0, Math.max(cut.lastIndexOf(' '), 120))}…`;
}

/** True when a label was drawn from one of these sentences: the sentence itself, or its start cut with an ellipsis. */
export function drawnFrom(label: string, sentences: Iterable<string>): boolean {
  const stem = label.endsWith('…') ? label.slice(0, -1) : null;
  for (const t of sentences) if (t === label || (stem !== null && t.startsWith(stem))) return true;
  return false;
}

/**
 * The label an event takes when the sentences `gone` leave it: unchanged (null) unless its
 * label was drawn from one of them; then its earliest remaining sentence (as stored, so in
 * full), or ERASED_LABEL when none has text.
 */
export function relabelAfter(label: string, gone: Iterable<string>, earliestRemaining: () => string | undefined): string | null {
  return drawnFrom(label, gone) ? (earliestRemaining() ?? ERASED_LABEL) : null;
}
