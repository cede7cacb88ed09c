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
import { createNlp } from '../text/nlp.js';
import {
  type Clustering,
  allSingletons,
  averageLinkDendrogram,
  dendrogramOf,
  lexicalOverlap,
  onePerSubtopic,
  onlineCentroid,
} from './baselines.js';
import type { EvalCorpus } from './corpus.js';
import { extendedBcubed } from './extended-bcubed.js';
import { linkDetected } from './link-detected.js';
import { clusteringOf, goldMemberships, partition, restrict, sentenceOf, toSets } from './clusterings.js';
import type { CorpusReport, EvalReport, SettingResult, SweepPoint, SystemResult } from './eval-report.js';
import { PRIMARY_RULE } from './eval-report.js';
import { bestOf, detectionScore, overall, storyScore } from './report-rows.js';
import { type SweepPool, startSweepPool } from './sweep-pool.js';
import { coarsePoints, pointsToRefine } from './sweep-points.js';
import { type PairKind, type PairScores, pairwiseLinkScores } from './pairwise-links.js';
import { type Score, conllScores, scorePartitions } from './partition-metrics.js';
import { type Setting, baselineMentions, detectArticles, selector, toArticles } from './prepare-mentions.js';

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
    const sets = toSets(s);
    const p = conllScores(goldPartition, partition(s));
    return {
      conll: p.conllF1,
      b3: p.b3,
      ext: extendedBcubed(goldSets, sets),
      pairwise: withPairs ? pairwiseLinkScores(goldSets, sets, articleOf, storyOf) : null,
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
    const sets = toSets(s);
    return {
      name,
      kind,
      seconds,
      best,
      partition: scorePartitions(goldPartition, partition(s)),
      extendedBcubed: extendedBcubed(goldSets, sets),
      pairwise: pairwiseLinkScores(goldSets, sets, articleOf, storyOf),
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
    // The baselines, on plain TF-IDF vectors of the same mentions.
    const plain = baselineMentions(detected, o.config.embed.hashBits);
    const flat = plain.flat();
    const { halfLifeDays, threshold } = o.config.link;
    // The batch baseline's merges (all pairs) go to a sweep thread first, being the longest task.
    const mergesAway = shared.pool?.merges(flat, halfLifeDays);
    mergesAway?.catch(() => undefined); // its failure is thrown where it is awaited, below

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
    // The refining rounds go on the sweep threads as soon as the first pass is in, while
    // this thread runs the baselines.
    const refined = (async () => {
      await firstPass;
      if (!refine) return;
      for (;;) {
        const next = pointsToRefine(o.thresholds, new Map([...linkerSweep].map(([t, q]) => [t, [q.conll, q.ext.f1]])));
        if (next.length === 0) break;
        await stopIfAsked(o.signal);
        await runAt(next);
      }
    })();
    if (shared.pool)
      refined.catch(() => undefined); // its failure is thrown where it is awaited, below
    else await refined;
    // Each point yields first, so the refining rounds' answers are taken in and the next
    // round sent to the sweep threads without waiting for the whole baseline sweep.
    // Times its own work only (clustering and scoring), not the refining rounds it lets in.
    const sweepOf = async (run: (t: number) => Clustering) => {
      const points = new Map<number, Quick>();
      let seconds = 0;
      for (const t of [threshold, ...o.thresholds]) {
        await new Promise((r) => setImmediate(r));
        const at = performance.now();
        if (!points.has(t)) points.set(t, quick(run(t), false));
        seconds += (performance.now() - at) / 1000;
      }
      return { points, seconds };
    };
    const onlineSweep = await sweepOf((t) => onlineCentroid(plain, t, halfLifeDays));
    const online = onlineSweep.points;
    const onlineSeconds = onlineSweep.seconds / online.size;
    const at = performance.now();
    const away = await mergesAway;
    const dendrogram = away ? dendrogramOf(flat, away.merges) : averageLinkDendrogram(flat, halfLifeDays);
    const built = away ? away.seconds : (performance.now() - at) / 1000;
    const batchSweep = await sweepOf((t) => dendrogram.cut(t));
    const batch = batchSweep.points;
    const batchSeconds = built + batchSweep.seconds;

    await refined;
    await stopIfAsked(o.signal);
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
