/**
 * Pairwise link agreement between a system's answer and a gold standard: every pair of
 * gold sentences is a link in the gold when the two share an event, and a link in the
 * answer when the system gave them a shared event. Precision, recall and F1 over those
 * pairs (the pairwise measure common in clustering evaluation; Manning et al., IIR 16.3),
 * overall and split by whether the two sentences are in the same article, in different
 * articles of one story, or in different stories.
 */

/** Sentence key (`article#index`) → event ids. */
export type Assignment = ReadonlyMap<string, ReadonlySet<string>>;

/** Precision, recall, F1 and the counts behind them. */
export interface PairScores {
  precision: number;
  recall: number;
  f1: number;
  goldPairs: number;
  systemPairs: number;
  agreedPairs: number;
}

/**
 * Pair kinds: all pairs; within one article; across articles; across articles of the same
 * story (subtopic); across stories (the rare, valuable cross-story links).
 */
export type PairKind = 'all' | 'withinArticle' | 'crossArticle' | 'sameStory' | 'crossStory';

/**
 * Scores over every sentence either side holds (a sentence only the system holds can only
 * add false links); `storyOf` maps an article id to its story, when known.
 */
export function pairwiseLinkScores(gold: Assignment, system: Assignment, articleOf: (key: string) => string, storyOf?: (article: string) => string | null): Record<PairKind, PairScores> {
  const counts: Record<PairKind, [number, number, number]> = { all: [0, 0, 0], withinArticle: [0, 0, 0], crossArticle: [0, 0, 0], sameStory: [0, 0, 0], crossStory: [0, 0, 0] };
  const keys = [...new Set([...gold.keys(), ...system.keys()])];
  const index = new Map(keys.map((k, i) => [k, i]));
  // Only pairs sharing an event on one side or the other count: they are found through the
  // events' member lists, each pair once (a stamp per partner), never by trying every pair.
  const members = (a: Assignment): Map<string, number[]> => {
    const by = new Map<string, number[]>();
    for (const [k, events] of a) for (const e of events) by.set(e, [...(by.get(e) ?? []), index.get(k)!]);
    return by;
  };
  const groups = [...members(gold).values(), ...members(system).values()];
  const groupsOf: number[][] = keys.map(() => []);
  groups.forEach((g, gi) => {
    for (const i of g) groupsOf[i]!.push(gi);
  });
  const seen = new Int32Array(keys.length).fill(-1);
  for (let i = 0; i < keys.length; i++) {
    const a = keys[i]!;
    for (const gi of groupsOf[i]!) {
      for (const j of groups[gi]!) {
        if (j <= i || seen[j] === i) continue;
        seen[j] = i;
        const b = keys[j]!;
        const g = shares(gold.get(a), gold.get(b));
        const s = shares(system.get(a), system.get(b));
        if (!g && !s) continue;
        const artA = articleOf(a);
        const artB = articleOf(b);
        const kinds: PairKind[] = ['all', artA === artB ? 'withinArticle' : 'crossArticle'];
        if (artA !== artB && storyOf) {
          const sa = storyOf(artA);
          const sb = storyOf(artB);
          if (sa && sb) kinds.push(sa === sb ? 'sameStory' : 'crossStory');
        }
        for (const k of kinds) {
          const c = counts[k];
          if (g) c[0]++;
          if (s) c[1]++;
          if (g && s) c[2]++;
        }
      }
    }
  }
  const out = {} as Record<PairKind, PairScores>;
  for (const [k, [gp, sp, both]] of Object.entries(counts) as [PairKind, [number, number, number]][]) {
    const precision = sp === 0 ? 0 : both / sp;
    const recall = gp === 0 ? 0 : both / gp;
    out[k] = { precision, recall, f1: precision + recall === 0 ? 0 : (2 * precision * recall) / (precision + recall), goldPairs: gp, systemPairs: sp, agreedPairs: both };
  }
  return out;
}

function shares(x: ReadonlySet<string> | undefined, y: ReadonlySet<string> | undefined): boolean {
  if (!x || !y) return false;
  for (const e of x) if (y.has(e)) return true;
  return false;
}
