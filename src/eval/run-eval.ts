/**
 * `strandline eval`: runs annotated corpora through the live link stage (the text stage
 * once per corpus and setting, then admission, embedding, story and event linking,
 * commits and consolidation on an in-memory store, at the configured threshold and at
 * every threshold of the sweep), scores the answers with every partition metric, extended
 * BCubed and pairwise link scores by link type, reports the linker's best threshold and
 * its regret (the score lost by the configured one), scores the stories, and runs the
 * baselines on the same mentions, side by side.
 */
import type { Config } from '../config/schema.js';
import { createEmbedder } from '../embed/create-embedder.js';
import type { Embedder } from '../embed/embedder.js';
import { StrandError } from '../errors.js';
import type { Logger } from '../logger.js';
import type { ArticleOutcome } from '../pipeline/index.js';
import { createNlp } from '../text/nlp.js';
import { type Clustering, allSingletons, averageLinkDendrogram, lexicalOverlap, onePerSubtopic, onlineCentroid } from './baselines.js';
import type { EvalCorpus } from './corpus.js';
import type { EvalInput } from './eval-input.js';
import { extendedBcubed } from './extended-bcubed.js';
import { linkDetected } from './link-detected.js';
import { clusteringOf, follow } from './clustering-of.js';
import { type SweepPool, startSweepPool } from './sweep-pool.js';
import { coarsePoints, pointsToRefine } from './sweep-points.js';
import { type PairKind, type PairScores, pairwiseLinkScores } from './pairwise-links.js';
import { type PartitionScores, type Score, conllScores, f1, scorePartitions } from './partition-metrics.js';
import { type Setting, baselineMentions, detectArticles, mentionKey, selector, toArticles } from './prepare-mentions.js';

/** How to run an evaluation. */
export interface EvalOptions {
  config: Readonly<Config>;
  settings: readonly Setting[];
  /** Link thresholds the linker and the thresholded baselines are run at, for best thresholds and regret. */
  thresholds: readonly number[];
  /**
   * 'every' runs every threshold; 'refine' (the command's default sweep) runs every third
   * one, then the neighbours of the best by CoNLL and by extended BCubed until the best of
   * each has had both its neighbours run (sweep-points.ts).
   */
  sweep?: 'every' | 'refine';
  logger: Logger;
  /** Stops the evaluation between steps (STRAND_STOPPED). */
  signal?: AbortSignal;
  /**
   * Threads the sweep's link runs go to (sweep-pool.ts); 0 or absent runs them on this
   * thread. Used with the TF-IDF embedder only: a transformer is loaded once, here.
   */
  threads?: number;
}

/** Scores of one system in one setting, at the configured threshold. */
export interface SystemResult {
  name: string;
  kind: 'linker' | 'baseline';
  partition: PartitionScores;
  extendedBcubed: Score;
  pairwise: Record<PairKind, PairScores>;
  /** Wall time of the system's clustering, seconds (the linker's: its link stage). */
  seconds: number;
  events: number;
  /** For systems with a threshold: their best over the sweep. */
  best: { conll: Best; extendedB3: Best } | null;
}

/** A system's best score over the sweep, and what the configured threshold gives up. */
export interface Best {
  threshold: number;
  value: number;
  /** Best value minus the value at the configured threshold (0 when the configured one is best). */
  regret: number;
}

/** One point of the threshold sweep. */
export interface SweepPoint {
  threshold: number;
  conllF1: number;
  extendedB3F1: number;
  pairwise: { precision: number; recall: number; f1: number };
  b3: Score;
  /** The online TF-IDF centroid baseline at the same threshold. */
  baseline: { conllF1: number; extendedB3F1: number };
}

/** Stories scored as a clustering of articles. */
export interface StoryScore {
  /** What the articles' stories are compared with. */
  against: 'subtopic' | 'topic' | 'article-level gold';
  articles: number;
  stories: number;
  groups: number;
  partition: PartitionScores;
}

/** Everything measured in one setting of one corpus. */
export interface SettingResult {
  setting: Setting;
  goldMentions: number;
  systemMentions: number;
  /** Mention detection against the gold (predicted setting, sentence-level gold only). */
  detection: Score | null;
  /** Wall time of the text stage (analysis and detection, once), seconds. */
  textSeconds: number;
  systems: SystemResult[];
  sweep: SweepPoint[];
  stories: StoryScore | null;
  /** The linker's answer for every scored mention: the event ids it gave, best first. */
  answer: { article: string; sentence: number | null; events: string[] }[];
  rejected: { article: string; reason: string }[];
}

/** One corpus's report. */
export interface CorpusReport {
  name: string;
  source: string;
  input: {
    articles: number;
    level: 'sentence' | 'article';
    goldLines: number;
    goldEvents: number;
    scoped: boolean;
    subtopics: boolean;
    dated: boolean;
    /** Gold mentions (sentences or articles) carrying more than one gold event, and all gold mentions. */
    multiEventMentions: number;
    goldMentions: number;
  };
  settings: SettingResult[];
}

/** Across corpora, per setting. */
export interface OverallRow {
  setting: Setting;
  corpora: number;
  meanConll: number;
  meanExtendedB3: number;
  maxRegretConll: number;
  maxRegretExtendedB3: number;
  /** Per corpus: the linker at the configured threshold minus the online baseline at its best threshold. */
  versusBaseline: { corpus: string; conll: number; extendedB3: number }[];
}

/** The whole evaluation. */
export interface EvalReport {
  created: string;
  configuration: {
    detectThreshold: number;
    linkThreshold: number;
    halfLifeDays: number;
    secondaryMargin: number;
    crossStoryMargin: number;
    storyThreshold: number;
  };
  thresholds: number[];
  primaryRule: string;
  corpora: CorpusReport[];
  overall: OverallRow[];
}

/**
 * Said when many gold mentions carry several events: the partition scores then count a
 * link to a sentence's other events as wrong, and favour higher thresholds than the
 * scores that use every event (extended BCubed, pairwise).
 */
export const MULTI_EVENT_NOTE =
  'partition scores give each of these one gold event only, so a link that matches one of its other events counts as wrong; extended BCubed and the pairwise scores count every event, and are the fairer guide on such gold.';

/** The rule that picks one gold event per mention for the partition scores. */
export const PRIMARY_RULE =
  'Partition scores (MUC, B3, CEAF, LEA, BLANC, CoNLL) need one event per mention: a gold mention takes, of its gold events, the one spanning most articles (the first line on a tie), a system mention its best-scoring link. Extended BCubed and the pairwise scores use every event of every mention.';

/** The default sweep: link thresholds 0.05 to 0.50 in steps of 0.025. */
export function defaultSweep(): number[] {
  return Array.from({ length: 19 }, (_, i) => Math.round((0.05 + i * 0.025) * 1000) / 1000);
}

/** Throws STRAND_STOPPED once `signal` aborted; first lets a pending signal handler run. */
async function stopIfAsked(signal: AbortSignal | undefined): Promise<void> {
  if (!signal) return;
  await new Promise((r) => setImmediate(r));
  if (signal.aborted) throw new StrandError('STRAND_STOPPED', 'stopped by a signal before the report was written');
}

/** A system's scores at one threshold, as the sweep keeps them. */
interface Quick {
  conll: number;
  b3: Score;
  ext: Score;
  pairwise: Record<PairKind, PairScores> | null;
}

/** Runs the evaluation over every corpus. */
export async function runEval(corpora: readonly EvalCorpus[], o: EvalOptions): Promise<EvalReport> {
  const created = new Date().toISOString();
  const nlp = createNlp();
  // A transformer model is loaded once; TF-IDF is made fresh for every run (it learns the stream).
  const model = o.config.embed.kind === 'transformer' ? await createEmbedder(o.config.embed) : undefined;
  const pool = !model && (o.threads ?? 0) > 0 ? await startSweepPool(o.threads!) : null;
  const reports: CorpusReport[] = [];
  try {
    for (const corpus of corpora) reports.push(await evaluateCorpus(corpus, o, { nlp, model, created, pool }));
  } finally {
    await pool?.close();
  }
  return {
    created,
    configuration: {
      detectThreshold: o.config.detect.threshold,
      linkThreshold: o.config.link.threshold,
      halfLifeDays: o.config.link.halfLifeDays,
      secondaryMargin: o.config.link.secondaryMargin,
      crossStoryMargin: o.config.link.crossStoryMargin,
      storyThreshold: o.config.link.storyThreshold,
    },
    thresholds: [...o.thresholds],
    primaryRule: PRIMARY_RULE,
    corpora: reports,
    overall: o.settings.map((setting) => overall(setting, reports)),
  };
}

async function evaluateCorpus(
  corpus: EvalCorpus,
  o: EvalOptions,
  shared: { nlp: ReturnType<typeof createNlp>; model: Embedder | undefined; created: string; pool: SweepPool | null },
): Promise<CorpusReport> {
  const { input } = corpus;
  const log = o.logger.child({ stage: 'eval', corpus: corpus.name });
  const articles = toArticles(input, corpus.source, shared.created);
  const gold = goldMemberships(input);
  const subtopics = input.articles.some((a) => a.subtopic !== null);
  const meta = new Map(input.articles.map((a) => [a.id, a]));
  const storyOf = subtopics ? (id: string) => meta.get(id)?.subtopic ?? null : undefined;
  const articleOf = (key: string) => key.slice(0, key.lastIndexOf('#'));
  const inScope = (key: string) => !input.scope || input.scope.has(key);
  const g = restrict(gold, inScope);
  const goldPartition = partition(g);
  const goldSets = toSets(g);
  // Every score for the systems' rows; for sweep points only what the sweep shows (the
  // CoNLL parts, extended BCubed, and for the linker the pairwise scores).
  const quick = (system: Clustering, withPairs: boolean): Quick => {
    const s = restrict(system, inScope);
    const p = conllScores(goldPartition, partition(s));
    return {
      conll: p.conllF1,
      b3: p.b3,
      ext: extendedBcubed(goldSets, toSets(s)),
      pairwise: withPairs ? pairwiseLinkScores(goldSets, toSets(s), articleOf, storyOf) : null,
    };
  };
  const score = (
    system: Clustering,
    name: string,
    kind: SystemResult['kind'],
    seconds: number,
    best: SystemResult['best'] = null,
  ): SystemResult => {
    const s = restrict(system, inScope);
    return {
      name,
      kind,
      seconds,
      best,
      partition: scorePartitions(goldPartition, partition(s)),
      extendedBcubed: extendedBcubed(goldSets, toSets(s)),
      pairwise: pairwiseLinkScores(goldSets, toSets(s), articleOf, storyOf),
      events: new Set([...s.values()].flat()).size,
    };
  };

  const settings: SettingResult[] = [];
  for (const setting of o.settings) {
    await stopIfAsked(o.signal);
    const t0 = performance.now();
    const detected = await detectArticles(
      shared.nlp,
      articles,
      selector(input, setting),
      o.config,
      shared.model ?? (await createEmbedder(o.config.embed)),
    );
    const textSeconds = (performance.now() - t0) / 1000;
    const deps = {
      nlp: shared.nlp,
      logger: o.logger,
      now: () => new Date(shared.created),
      ...(shared.model ? { embedder: shared.model } : {}),
    };
    const withThreshold = (t: number): Readonly<Config> => ({ ...o.config, link: { ...o.config.link, threshold: t } });

    // The sweep's points run on the sweep threads while this thread runs the linker at the
    // configured threshold and the baselines; without sweep threads, one after another here.
    const runs = new Map<number, Clustering>();
    const linkerSweep = new Map<number, Quick>();
    const runAt = async (points: readonly number[]): Promise<void> => {
      const todo = [...new Set(points)].filter((t) => t !== o.config.link.threshold && !runs.has(t));
      const keep = (t: number, c: Clustering) => {
        runs.set(t, c);
        linkerSweep.set(t, quick(c, true));
      };
      if (shared.pool) {
        const answers = await Promise.all(
          todo.map((t) => shared.pool!.run({ config: withThreshold(t), detected, created: shared.created })),
        );
        todo.forEach((t, k) => keep(t, answers[k]!.clustering));
        return;
      }
      for (const t of todo) {
        await stopIfAsked(o.signal);
        keep(t, clusteringOf((await linkDetected(withThreshold(t), detected, deps)).outcomes));
      }
    };
    const refine = o.sweep === 'refine' && o.thresholds.length > 4;
    const firstPass = runAt(refine ? coarsePoints(o.thresholds) : o.thresholds);
    if (shared.pool)
      firstPass.catch(() => undefined); // its failure is thrown where it is awaited, below
    else await firstPass;
    const configured = await linkDetected(o.config, detected, deps);
    const linked = clusteringOf(configured.outcomes);
    runs.set(o.config.link.threshold, linked);
    linkerSweep.set(o.config.link.threshold, quick(linked, true));
    // The baselines, on plain TF-IDF vectors of the same mentions.
    const plain = baselineMentions(detected, o.config.embed.hashBits);
    const flat = plain.flat();
    const { halfLifeDays, threshold } = o.config.link;
    const sweepOf = (run: (t: number) => Clustering) => new Map([threshold, ...o.thresholds].map((t) => [t, quick(run(t), false)]));
    let at = performance.now();
    const online = sweepOf((t) => onlineCentroid(plain, t, halfLifeDays));
    const onlineSeconds = (performance.now() - at) / 1000 / online.size;
    at = performance.now();
    const dendrogram = averageLinkDendrogram(flat, halfLifeDays);
    const batch = sweepOf((t) => dendrogram.cut(t));
    const batchSeconds = (performance.now() - at) / 1000;

    await firstPass;
    await stopIfAsked(o.signal);
    if (refine) {
      for (;;) {
        const next = pointsToRefine(o.thresholds, new Map([...linkerSweep].map(([t, q]) => [t, [q.conll, q.ext.f1]])));
        if (next.length === 0) break;
        await stopIfAsked(o.signal);
        await runAt(next);
      }
    }
    // The points the linker ran at. The baselines are cheap and run at every point, so
    // their best is never understated by the linker's shorter sweep.
    const points = o.thresholds.filter((t) => runs.has(t));

    const groupOf = (id: string) => meta.get(id)?.subtopic ?? meta.get(id)?.topic ?? null;
    const systems: SystemResult[] = [
      score(linked, 'Strandline linker', 'linker', configured.seconds, bestOf(linkerSweep, threshold, points)),
      timedScore(() => allSingletons(flat), 'baseline: all singletons', score),
      timedScore(() => onePerSubtopic(flat, groupOf), 'baseline: one event per subtopic', score),
      timedScore(() => lexicalOverlap(flat), 'baseline: lexical overlap', score),
      score(
        onlineCentroid(plain, threshold, halfLifeDays),
        'baseline: online TF-IDF centroid',
        'baseline',
        onlineSeconds,
        bestOf(online, threshold, o.thresholds),
      ),
      score(
        dendrogram.cut(threshold),
        'baseline: batch average-link (all pairs)',
        'baseline',
        batchSeconds,
        bestOf(batch, threshold, o.thresholds),
      ),
    ];
    const sweep: SweepPoint[] = points.map((t) => {
      const l = linkerSweep.get(t)!;
      const b = online.get(t)!;
      const all = l.pairwise!.all;
      return {
        threshold: t,
        conllF1: l.conll,
        extendedB3F1: l.ext.f1,
        pairwise: { precision: all.precision, recall: all.recall, f1: all.f1 },
        b3: l.b3,
        baseline: { conllF1: b.conll, extendedB3F1: b.ext.f1 },
      };
    });
    log.info({ setting, mentions: flat.length, textSeconds, linkSeconds: configured.seconds }, 'setting scored');
    settings.push({
      setting,
      goldMentions: [...gold.keys()].filter(inScope).length,
      systemMentions: [...linked.keys()].filter(inScope).length,
      detection: setting === 'predicted' && input.level === 'sentence' ? detectionScore(gold, linked, inScope) : null,
      textSeconds,
      systems,
      sweep,
      stories: storyScore(configured.outcomes, input),
      answer: [...linked].filter(([k]) => inScope(k)).map(([k, events]) => ({ article: articleOf(k), sentence: sentenceOf(k), events })),
      rejected: configured.outcomes.filter((x) => x.status === 'rejected').map((x) => ({ article: x.articleId, reason: x.reason ?? '' })),
    });
  }
  return {
    name: corpus.name,
    source: corpus.source,
    input: {
      articles: input.articles.length,
      level: input.level,
      goldLines: input.gold.length,
      goldEvents: new Set(input.gold.map((x) => x.event)).size,
      scoped: input.scope !== null,
      subtopics,
      dated: input.articles.some((a) => a.published !== null),
      multiEventMentions: [...gold.values()].filter((events) => events.length > 1).length,
      goldMentions: gold.size,
    },
    settings,
  };
}

function timedScore(
  run: () => Clustering,
  name: string,
  score: (c: Clustering, name: string, kind: SystemResult['kind'], seconds: number) => SystemResult,
): SystemResult {
  const t0 = performance.now();
  const c = run();
  return score(c, name, 'baseline', (performance.now() - t0) / 1000);
}

/** The best CoNLL and extended BCubed over the sweep, and the regret of the configured threshold. */
function bestOf(
  sweep: ReadonlyMap<number, { conll: number; ext: Score }>,
  configured: number,
  thresholds: readonly number[],
): SystemResult['best'] {
  const pick = (f: (x: { conll: number; ext: Score }) => number): Best => {
    let best = { threshold: configured, value: f(sweep.get(configured)!) };
    for (const t of thresholds) {
      const v = f(sweep.get(t)!);
      if (v > best.value) best = { threshold: t, value: v };
    }
    return { ...best, regret: best.value - f(sweep.get(configured)!) };
  };
  return { conll: pick((x) => x.conll), extendedB3: pick((x) => x.ext.f1) };
}

function overall(setting: Setting, reports: readonly CorpusReport[]): OverallRow {
  const rows = reports.flatMap((r) => r.settings.filter((s) => s.setting === setting).map((s) => ({ corpus: r.name, s })));
  const linker = (s: SettingResult) => s.systems.find((x) => x.kind === 'linker')!;
  const online = (s: SettingResult) => s.systems.find((x) => x.name === 'baseline: online TF-IDF centroid')!;
  const mean = (xs: number[]) => (xs.length ? xs.reduce((a, b) => a + b, 0) / xs.length : 0);
  return {
    setting,
    corpora: rows.length,
    meanConll: mean(rows.map(({ s }) => linker(s).partition.conllF1)),
    meanExtendedB3: mean(rows.map(({ s }) => linker(s).extendedBcubed.f1)),
    maxRegretConll: Math.max(0, ...rows.map(({ s }) => linker(s).best!.conll.regret)),
    maxRegretExtendedB3: Math.max(0, ...rows.map(({ s }) => linker(s).best!.extendedB3.regret)),
    versusBaseline: rows.map(({ corpus, s }) => ({
      corpus,
      conll: linker(s).partition.conllF1 - online(s).best!.conll.value,
      extendedB3: linker(s).extendedBcubed.f1 - online(s).best!.extendedB3.value,
    })),
  };
}

/**
 * The stories as a clustering of articles, against the corpus's story labels: subtopics
 * where given, else article-level gold events, else topics (coarser than stories; said so).
 */
function storyScore(outcomes: readonly ArticleOutcome[], input: EvalInput): StoryScore | null {
  const storyOf = new Map<string, string>();
  const redirect = new Map<string, string>();
  for (const o of outcomes) {
    if (o.story) storyOf.set(o.articleId, o.story);
    for (const m of o.storyMerges) redirect.set(m.from, m.into);
  }
  const label = new Map<string, string>();
  let against: StoryScore['against'];
  if (input.articles.some((a) => a.subtopic !== null)) {
    against = 'subtopic';
    for (const a of input.articles) if (a.subtopic !== null) label.set(a.id, a.subtopic);
  } else if (input.level === 'article') {
    against = 'article-level gold';
    for (const g of input.gold) if (!label.has(g.article)) label.set(g.article, g.event);
  } else if (input.articles.some((a) => a.topic !== null)) {
    against = 'topic';
    for (const a of input.articles) if (a.topic !== null) label.set(a.id, a.topic);
  } else {
    return null;
  }
  const keys = [...label.keys()].filter((id) => storyOf.has(id));
  if (keys.length === 0) return null;
  const system = new Map(keys.map((id) => [id, [follow(redirect, storyOf.get(id)!)]]));
  const key = new Map(keys.map((id) => [id, [label.get(id)!]]));
  return {
    against,
    articles: keys.length,
    stories: new Set([...system.values()].flat()).size,
    groups: new Set([...key.values()].flat()).size,
    partition: scorePartitions(partition(key), partition(system)),
  };
}

/**
 * Each gold mention's events, the primary one first: the event spanning most articles (a
 * cross-document event), the first in file order on a tie.
 */
function goldMemberships(input: EvalInput): Clustering {
  const articlesOf = new Map<string, Set<string>>();
  for (const x of input.gold) articlesOf.set(x.event, (articlesOf.get(x.event) ?? new Set()).add(x.article));
  const out: Clustering = new Map();
  for (const x of input.gold) {
    const k = mentionKey(x.article, x.sentence);
    const list = out.get(k) ?? [];
    if (!list.includes(x.event)) list.push(x.event);
    out.set(k, list);
  }
  for (const [k, list] of out) {
    const first = list.reduce((best, e) => (articlesOf.get(e)!.size > articlesOf.get(best)!.size ? e : best), list[0]!);
    out.set(k, [first, ...list.filter((e) => e !== first)]);
  }
  return out;
}

function restrict(c: Clustering, keep: (key: string) => boolean): Clustering {
  return new Map([...c].filter(([k]) => keep(k)));
}

/** Clusters of mentions by their first (primary) event. */
function partition(c: Clustering): string[][] {
  const by = new Map<string, string[]>();
  for (const [k, events] of c) {
    const cluster = by.get(events[0]!);
    if (cluster) cluster.push(k);
    else by.set(events[0]!, [k]);
  }
  return [...by.values()];
}

function toSets(c: Clustering): Map<string, Set<string>> {
  return new Map([...c].map(([k, v]) => [k, new Set(v)]));
}

function detectionScore(gold: Clustering, system: Clustering, inScope: (k: string) => boolean): Score {
  const g = [...gold.keys()].filter(inScope);
  const s = [...system.keys()].filter(inScope);
  const sys = new Set(s);
  const hit = g.filter((k) => sys.has(k)).length;
  const recall = g.length ? hit / g.length : 0;
  const precision = s.length ? hit / s.length : 0;
  return { recall, precision, f1: f1(recall, precision) };
}

function sentenceOf(key: string): number | null {
  const n = Number(key.slice(key.lastIndexOf('#') + 1));
  return n < 0 ? null : n;
}
