/**
 * A labelled set of article pairs for measuring copy detection, built from a list of
 * articles: each article with lightly edited copies of it (another outlet's headline line
 * and byline, the last paragraph cut, a few words changed, a line of credit added, and two
 * of these at once) as positives; pairs of different articles, including articles about the
 * same story written by different outlets, as negatives. Deterministic for a given seed.
 */
export interface LabelledPair {
  a: string;
  b: string;
  copy: boolean;
  kind: string;
}

/** Edits a copy may carry. */
const EDITS: Record<string, (text: string, rnd: () => number) => string> = {
  'new headline and byline': (t) => `Harbour Ledger staff and agencies\n\n${t}`,
  'last paragraph cut': (t) => {
    const paras = t.split(/\n\n+/);
    return paras.length > 1
      ? paras.slice(0, -1).join('\n\n')
      : t
          .split(/(?<=\.)\s+/)
          .slice(0, -1)
          .join(' ');
  },
  'a few words changed': (t, rnd) =>
    t
      .split(' ')
      .map((w) => (rnd() < 0.03 ? 'reportedly' : w))
      .join(' '),
  'credit line added': (t) => `${t}\n\nThis report was distributed by the Northwire agency.`,
};

export function buildPairSet(articles: readonly { id: string; text: string; story: string | null }[], seed = 1): LabelledPair[] {
  let x = seed >>> 0;
  const rnd = (): number => (x = (Math.imul(x, 1664525) + 1013904223) >>> 0) / 2 ** 32;
  const usable = articles.filter((a) => a.text.split(/\s+/).length >= 60);
  const pairs: LabelledPair[] = [];
  const names = Object.keys(EDITS);
  for (const a of usable) {
    for (const name of names) pairs.push({ a: a.text, b: EDITS[name]!(a.text, rnd), copy: true, kind: name });
    const [e1, e2] = [names[Math.floor(rnd() * names.length)]!, names[Math.floor(rnd() * names.length)]!];
    pairs.push({ a: a.text, b: EDITS[e2]!(EDITS[e1]!(a.text, rnd), rnd), copy: true, kind: 'two edits' });
  }
  for (let i = 0; i < usable.length; i++) {
    for (let j = i + 1; j < usable.length; j++) {
      const [a, b] = [usable[i]!, usable[j]!];
      if (a.story !== null && a.story === b.story) pairs.push({ a: a.text, b: b.text, copy: false, kind: 'same story, other outlet' });
      else if (rnd() < 0.05) pairs.push({ a: a.text, b: b.text, copy: false, kind: 'unrelated' });
    }
  }
  return pairs;
}
