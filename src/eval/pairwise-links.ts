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
 *
 * Pairs of sentences with at most one event on each side are counted, not visited: within a
 * group of n sentences sharing an event (and an article, or a story) there are n(n-1)/2 such
 * pairs. Only pairs involving a sentence with several events on one side are visited, each
 * once. The same counts as trying every pair, in time linear in the sentences when events
 * are single, so a threshold sweep over a giant cluster stays cheap.
 */
export function pairwiseLinkScores(
  gold: Assignment,
  system: Assignment,
  articleOf: (key: string) => string,
  storyOf?: (article: string) => string | null,
): Record<PairKind, PairScores> {
  const counts: Record<PairKind, [number, number, number]> = {
    all: [0, 0, 0],
    withinArticle: [0, 0, 0],
    crossArticle: [0, 0, 0],
    sameStory: [0, 0, 0],
    crossStory: [0, 0, 0],
  };
  const keys = [...new Set([...gold.keys(), ...system.keys()])];
  const article = keys.map(articleOf);
  const story = article.map((a) => (storyOf ? storyOf(a) : null));
  const goldOf = keys.map((k) => gold.get(k) ?? EMPTY);
  const systemOf = keys.map((k) => system.get(k) ?? EMPTY);
  const multi = keys.map((_, i) => goldOf[i]!.size > 1 || systemOf[i]!.size > 1);

  // Pairs of single-event sentences, by counting: a pair shares a gold event when both have
  // the same one, and so on. Sizes of groups keyed by (side's events, article or story).
  const single = (i: number, set: ReadonlySet<string>): string | null => (multi[i] || set.size === 0 ? null : set.values().next().value!);
  const tallies = { g: new Map<string, number>(), s: new Map<string, number>(), gs: new Map<string, number>() };
  const bump = (m: Map<string, number>, key: string): void => void m.set(key, (m.get(key) ?? 0) + 1);
  for (let i = 0; i < keys.length; i++) {
    const g = single(i, goldOf[i]!);
    const s = single(i, systemOf[i]!);
    // Scopes: every sentence; its article; its story and "has a story" when it has one.
    const scopes = ['all', `a\u0001${article[i]}`, ...(story[i] ? [`t\u0001${story[i]}`, 'known'] : [])];
    for (const scope of scopes) {
      if (g !== null) bump(tallies.g, `${scope}\u0000${g}`);
      if (s !== null) bump(tallies.s, `${scope}\u0000${s}`);
      if (g !== null && s !== null) bump(tallies.gs, `${scope}\u0000${g}\u0000${s}`);
    }
  }
  const pairs = (m: Map<string, number>, scope: (key: string) => boolean): number => {
    let n = 0;
    for (const [key, c] of m) if (scope(key)) n += (c * (c - 1)) / 2;
    return n;
  };
  const inScope = (prefix: string) => (key: string) => key.startsWith(prefix);
  const isAll = (key: string) => key.startsWith('all\u0000');
  const isArticle = inScope('a\u0001');
  const isStory = inScope('t\u0001');
  const isKnown = inScope('known\u0000');
  const sides = [tallies.g, tallies.s, tallies.gs] as const;
  for (let side = 0; side < 3; side++) {
    const m = sides[side]!;
    const all = pairs(m, isAll);
    const within = pairs(m, isArticle);
    const inStory = pairs(m, isStory);
    const withinKnown = storyOf ? pairsWithinKnownArticles(m, article, story) : 0;
    const add = (kind: PairKind, n: number): void => void (counts[kind][side] = counts[kind][side]! + n);
    add('all', all);
    add('withinArticle', within);
    add('crossArticle', all - within);
    // Across articles of one story: pairs in one story less those in one article (an article has one story).
    add('sameStory', inStory - withinKnown);
    add('crossStory', pairs(m, isKnown) - inStory);
  }

  // Pairs with a multi-event sentence on either side, visited through the events' members.
  const members = new Map<string, number[]>();
  for (let i = 0; i < keys.length; i++) {
    for (const e of goldOf[i]!) push(members, `g\u0000${e}`, i);
    for (const e of systemOf[i]!) push(members, `s\u0000${e}`, i);
  }
  const seen = new Int32Array(keys.length).fill(-1);
  for (let i = 0; i < keys.length; i++) {
    if (!multi[i]) continue;
    seen[i] = i;
    const visit = (j: number): void => {
      // A pair of two multi-event sentences is visited from the first of them only.
      if (seen[j] === i || (multi[j] && j < i)) return;
      seen[j] = i;
      const g = shares(goldOf[i]!, goldOf[j]!);
      const s = shares(systemOf[i]!, systemOf[j]!);
      if (!g && !s) return;
      const kinds: PairKind[] = ['all', article[i] === article[j] ? 'withinArticle' : 'crossArticle'];
      if (article[i] !== article[j] && story[i] && story[j]) kinds.push(story[i] === story[j] ? 'sameStory' : 'crossStory');
      for (const k of kinds) {
        const c = counts[k];
        if (g) c[0]++;
        if (s) c[1]++;
        if (g && s) c[2]++;
      }
    };
    for (const e of goldOf[i]!) for (const j of members.get(`g\u0000${e}`)!) visit(j);
    for (const e of systemOf[i]!) for (const j of members.get(`s\u0000${e}`)!) visit(j);
  }

  const out = {} as Record<PairKind, PairScores>;
  for (const [k, [gp, sp, both]] of Object.entries(counts) as [PairKind, [number, number, number]][]) {
    const precision = sp === 0 ? 0 : both / sp;
    const recall = gp === 0 ? 0 : both / gp;
    out[k] = {
      precision,
      recall,
      f1: precision + recall === 0 ? 0 : (2 * precision * recall) / (precision + recall),
      goldPairs: gp,
      systemPairs: sp,
      agreedPairs: both,
    };
  }
  return out;
}

/** Pairs within one article among the tallied groups, counted only for articles with a story. */
function pairsWithinKnownArticles(m: Map<string, number>, article: readonly string[], story: readonly (string | null)[]): number {
  const known = new Set<string>();
  article.forEach((a, i) => {
    if (story[i]) known.add(a);
  });
  let n = 0;
  for (const [key, c] of m) {
    if (!key.startsWith('a\u0001')) continue;
    const a = key.slice(2, key.indexOf('\u0000'));
    if (known.has(a)) n += (c * (c - 1)) / 2;
  }
  return n;
}

const EMPTY: ReadonlySet<string> = new Set();

function push(m: Map<string, number[]>, key: string, i: number): void {
  const list = m.get(key);
  if (list) list.push(i);
  else m.set(key, [i]);
}

function shares(x: ReadonlySet<string>, y: ReadonlySet<string>): boolean {
  for (const e of x) if (y.has(e)) return true;
  return false;
}
