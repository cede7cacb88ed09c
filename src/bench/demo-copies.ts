/** The demo made longer for the bench: copies of its articles with new ids and shifted dates. */
import type { Article } from '../records.js';

const DAY_MS = 86_400_000;

/**
 * `n` copies of the articles with new ids and dates shifted by 20 days per copy (the shift
 * keeps copies from joining the originals' events), starting at copy `first`.
 */
export function copies(base: readonly Article[], n: number, first = 0): Article[] {
  const out: Article[] = [];
  for (let k = first; k < first + n; k++) {
    for (const a of base) {
      const shift = (t: string | null) => (t ? new Date(Date.parse(t) + k * 20 * DAY_MS).toISOString() : t);
      out.push({
        ...a,
        id: `${a.id}#copy${k}`,
        url: a.url ? `${a.url}?copy=${k}` : null,
        published: shift(a.published),
        contentHash: `${a.contentHash}:${k}`,
        duplicateOf: null,
      });
    }
  }
  return out;
}
