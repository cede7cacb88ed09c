/** Analysts' "keep apart" pairs: their keys, and how they hold within a consolidation pass. */
const SEPARATOR = '\n';

/** One key for an unordered pair of ids (ids hold no line breaks). */
export function pairKey(a: string, b: string): string {
  return a < b ? `${a}${SEPARATOR}${b}` : `${b}${SEPARATOR}${a}`;
}

/**
 * Analysts' "keep apart" pairs during one consolidation pass. Merges planned in a pass
 * gather events (or stories) into groups around a survivor; two that an analyst set apart
 * must not meet in one survivor, directly or through a third that absorbs both.
 */
export class ApartGroups {
  private readonly survivor = new Map<string, string>();
  private readonly members = new Map<string, string[]>();
  private readonly apartOf = new Map<string, string[]>();

  /** `pairs`: the analysts' pairs as pairKey() keys. */
  constructor(pairs: Iterable<string>) {
    for (const pair of pairs) {
      const [a, b] = pair.split(SEPARATOR) as [string, string];
      (this.apartOf.get(a) ?? this.apartOf.set(a, []).get(a)!).push(b);
      (this.apartOf.get(b) ?? this.apartOf.set(b, []).get(b)!).push(a);
    }
  }

  /** Whether merging the groups of `x` and `y` would put a pair kept apart together. */
  keptApart(x: string, y: string): boolean {
    if (this.apartOf.size === 0) return false;
    const [rx, ry] = [this.root(x), this.root(y)];
    return (this.members.get(rx) ?? [rx]).some((m) => (this.apartOf.get(m) ?? []).some((n) => this.root(n) === ry));
  }

  /** Records a planned merge of `from` into `into`. */
  merged(from: string, into: string): void {
    this.survivor.set(from, into);
    this.members.set(into, [...(this.members.get(into) ?? [into]), ...(this.members.get(from) ?? [from])]);
  }

  private root(x: string): string {
    while (this.survivor.has(x)) x = this.survivor.get(x)!;
    return x;
  }
}
