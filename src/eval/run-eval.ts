/**
 * `strandline eval`: runs the input through the same pipeline as live ingest (minus
 * splitting), in one or both settings, scores the answer with every partition metric,
 * extended BCubed and pairwise link scores by link type, and runs the baselines on the
 * same mentions and vectors, side by side. Optionally sweeps the link threshold.
 */
import { NEVER, from, fromEvent, lastValueFrom, takeUntil, toArray } from 'rxjs';
import type { Config } from '../config/schema.js';
import { TfidfEmbedder } from '../embed/tfidf-embedder.js';
import { OnlineLinker } from '../link/online-linker.js';
import { StrandError } from '../errors.js';
import type { Logger } from '../logger.js';
import { type ArticleOutcome, runPipeline } from '../pipeline.js';
import { openSqliteStore } from '../store/sqlite/sqlite-store.js';
import { createNlp } from '../text/nlp.js';
import { type Clustering, allSingletons, batchAverageLink, lexicalOverlap, onePerSubtopic, onlineCentroid } from './baselines.js';
import type { EvalInput } from './eval-input.js';
import { extendedBcubed } from './extended-bcubed.js';
import { linkPrepared } from './link-prepared.js';
import { type PairKind, type PairScores, pairwiseLinkScores } from './pairwise-links.js';
import { type PartitionScores, type Score, f1, scorePartitions } from './partition-metrics.js';
import { type Setting, mentionKey, prepareMentions, selector, toArticles } from './prepare-mentions.js';

/** How to run an evaluation. */
export interface EvalOptions {
  config: Readonly<Config>;
  settings: readonly Setting[];
  /** Link thresholds to sweep (gold-mention setting when run, else the first setting), or null. */
  sweep: readonly number[] | null;
  /** Name of the input, for the report. */
  source: string;
  logger: Logger;
  /** Stops the evaluation between steps (STRAND_STOPPED). */
  signal?: AbortSignal;
}

/** Scores of one system in one setting. */
export interface SystemResult {
  name: string;
  kind: 'linker' | 'baseline';
  partition: PartitionScores;
  extendedBcubed: Score;
  pairwise: Record<PairKind, PairScores>;
  /** Wall time of the system's clustering on prepared mentions, seconds. */
  seconds: number;
  events: number;
}

/** Everything measured in one setting. */
export interface SettingResult {
  setting: Setting;
  goldMentions: number;
  systemMentions: number;
  /** Mention detection against the gold (predicted setting, sentence-level gold only). */
  detection: Score | null;
  /** Wall time of the whole pipeline (analysis, detection, embedding, linking, storing), seconds. */
  pipelineSeconds: number;
  /** True when linking the prepared mentions gave the same events as the pipeline run. */
  linkStepMatchesPipeline: boolean;
  systems: SystemResult[];
  /** The linker's answer for every scored mention: the event ids it gave, best first. */
  answer: { article: string; sentence: number | null; events: string[] }[];
  rejected: { article: string; reason: string }[];
}

/** One point of the threshold sweep. */
export interface SweepPoint {
  threshold: number;
  conllF1: number;
  pairwise: { precision: number; recall: number; f1: number };
  b3: Score;
  /** Extended BCubed F1: every gold event of a sentence counts, not only its first. */
  extendedB3F1: number;
  /** The online TF-IDF centroid baseline at the same threshold. */
  baseline: { conllF1: number; extendedB3F1: number };
}

/** The whole evaluation. */
export interface EvalReport {
  source: string;
  created: string;
  input: {
    articles: number; level: 'sentence' | 'article'; goldLines: number; goldEvents: number; scoped: boolean; subtopics: boolean;
    /** Gold mentions (sentences or articles) carrying more than one gold event, and all gold mentions. */
    multiEventMentions: number; goldMentions: number;
  };
  configuration: { detectThreshold: number; linkThreshold: number; halfLifeDays: number; secondaryMargin: number };
  primaryRule: string;
  settings: SettingResult[];
  sweep: { setting: Setting; points: SweepPoint[] } | null;
}

/**
 * Said when many gold mentions carry several events: the partition scores then count a
 * link to a sentence's other event as wrong, and favour higher thresholds than the
 * scores that use every event (extended BCubed, pairwise).
 */
export const MULTI_EVENT_NOTE =
  'partition scores give each of these its first gold event only, so a link that matches one of its other events counts as wrong; extended BCubed and the pairwise scores count every event, and are the fairer guide to the threshold on such gold.';

/** The rule that picks one gold event per mention for the partition scores. */
export const PRIMARY_RULE =
  'Partition scores (MUC, B3, CEAF, LEA, BLANC, CoNLL) need one event per mention: a gold mention takes the event of its first gold line in file order, a system mention its best-scoring link. Extended BCubed and the pairwise scores use every event of every mention.';

/** Throws STRAND_STOPPED once `signal` aborted; first lets a pending signal handler run. */
async function stopIfAsked(signal: AbortSignal | undefined): Promise<void> {
  if (!signal) return;
  await new Promise((r) => setImmediate(r));
  if (signal.aborted) throw new StrandError('STRAND_STOPPED', 'stopped by a signal before the report was written');
}

/** Runs the evaluation. */
export async function runEval(input: EvalInput, o: EvalOptions): Promise<EvalReport> {
  const log = o.logger.child({ stage: 'eval' });
  const startedAt = new Date().toISOString();
  const articles = toArticles(input, o.source, startedAt);
  const nlp = createNlp();
  const gold = goldMemberships(input);
  const subtopics = input.articles.some((a) => a.subtopic !== null);
  const meta = new Map(input.articles.map((a) => [a.id, a]));
  const storyOf = subtopics ? (id: string) => meta.get(id)?.subtopic ?? null : undefined;
  const articleOf = (key: string) => key.slice(0, key.lastIndexOf('#'));
  const inScope = (key: string) => !input.scope || input.scope.has(key);
  const score = (system: Clustering, name: string, kind: SystemResult['kind'], seconds: number): SystemResult => {
    const g = restrict(gold, inScope);
    const s = restrict(system, inScope);
    return {
      name, kind, seconds,
      partition: scorePartitions(partition(g), partition(s)),
      extendedBcubed: extendedBcubed(toSets(g), toSets(s)),
      pairwise: pairwiseLinkScores(toSets(g), toSets(s), articleOf, storyOf),
      events: new Set([...s.values()].flat()).size,
    };
  };

  const settings: SettingResult[] = [];
  let sweep: EvalReport['sweep'] = null;
  for (const setting of o.settings) {
    await stopIfAsked(o.signal);
    const select = selector(input, setting);
    const store = openSqliteStore(':memory:');
    const t0 = performance.now();
    const outcomes = await lastValueFrom(runPipeline(from(articles).pipe(takeUntil(o.signal ? fromEvent(o.signal, 'abort') : NEVER)), {
      config: o.config, nlp, embedder: new TfidfEmbedder(o.config.embed.hashBits), linker: new OnlineLinker(o.config.link), store, logger: o.logger,
      now: () => new Date(startedAt), selectMentions: select,
    }).pipe(toArray()));
    const pipelineSeconds = (performance.now() - t0) / 1000;
    await store.close();
    await stopIfAsked(o.signal);
    const linked = clusteringOf(outcomes);

    const prepared = prepareMentions(nlp, articles, select, o.config.detect.threshold, o.config.embed.hashBits);
    const flat = prepared.flat();
    const { clustering: stepOnly, seconds: linkSeconds } = timed(() => linkPrepared(prepared, o.config.link));
    const result: SettingResult = {
      setting,
      goldMentions: [...gold.keys()].filter(inScope).length,
      systemMentions: [...linked.keys()].filter(inScope).length,
      detection: setting === 'predicted' && input.level === 'sentence' ? detectionScore(gold, linked, inScope) : null,
      pipelineSeconds,
      linkStepMatchesPipeline: samePartition(stepOnly, linked),
      systems: [score(linked, 'Strandline linker', 'linker', linkSeconds)],
      answer: [...linked].filter(([k]) => inScope(k)).map(([k, events]) => ({ article: articleOf(k), sentence: sentenceOf(k), events })),
      rejected: outcomes.filter((x) => x.status === 'rejected').map((x) => ({ article: x.articleId, reason: x.reason ?? '' })),
    };
    const groupOf = (id: string) => meta.get(id)?.subtopic ?? meta.get(id)?.topic ?? null;
    const { threshold, halfLifeDays } = o.config.link;
    const baselines: [string, () => Clustering][] = [
      ['baseline: all singletons', () => allSingletons(flat)],
      ['baseline: one event per subtopic', () => onePerSubtopic(flat, groupOf)],
      ['baseline: lexical overlap', () => lexicalOverlap(flat)],
      ['baseline: online TF-IDF centroid', () => onlineCentroid(prepared, threshold, halfLifeDays)],
      ['baseline: batch average-link (all pairs)', () => batchAverageLink(flat, threshold, halfLifeDays)],
    ];
    for (const [name, run] of baselines) {
      await stopIfAsked(o.signal);
      const { clustering, seconds } = timed(run);
      result.systems.push(score(clustering, name, 'baseline', seconds));
    }
    log.info({ setting, mentions: flat.length, seconds: pipelineSeconds }, 'setting scored');
    settings.push(result);

    const sweepSetting = o.settings.includes('gold') ? 'gold' : o.settings[0];
    if (o.sweep && setting === sweepSetting) {
      sweep = {
        setting,
        points: o.sweep.map((t) => {
          const s = score(linkPrepared(prepared, { ...o.config.link, threshold: t }), 'sweep', 'linker', 0);
          const b = score(onlineCentroid(prepared, t, halfLifeDays), 'sweep', 'baseline', 0);
          return {
            threshold: t, conllF1: s.partition.conllF1, pairwise: { precision: s.pairwise.all.precision, recall: s.pairwise.all.recall, f1: s.pairwise.all.f1 }, b3: s.partition.b3,
            extendedB3F1: s.extendedBcubed.f1, baseline: { conllF1: b.partition.conllF1, extendedB3F1: b.extendedBcubed.f1 },
          };
        }),
      };
    }
  }
  return {
    source: o.source,
    created: startedAt,
    input: {
      articles: input.articles.length, level: input.level, goldLines: input.gold.length, goldEvents: new Set(input.gold.map((g) => g.event)).size,
      scoped: input.scope !== null, subtopics,
      multiEventMentions: [...gold.values()].filter((events) => events.length > 1).length, goldMentions: gold.size,
    },
    configuration: { detectThreshold: o.config.detect.threshold, linkThreshold: o.config.link.threshold, halfLifeDays: o.config.link.halfLifeDays, secondaryMargin: o.config.link.secondaryMargin },
    primaryRule: PRIMARY_RULE,
    settings,
    sweep,
  };
}

/** The default sweep: link thresholds 0.05 to 0.50 in steps of 0.025. */
export function defaultSweep(): number[] {
  return Array.from({ length: 19 }, (_, i) => Math.round((0.05 + i * 0.025) * 1000) / 1000);
}

/** Each mention's events as the pipeline left them: links as made, then merges and splits in order. */
function clusteringOf(outcomes: readonly ArticleOutcome[]): Clustering {
  const assigned: Clustering = new Map();
  const redirect = new Map<string, string>();
  for (const out of outcomes) {
    for (const a of out.assignments) assigned.set(mentionKey(out.articleId, a.sentenceIndex), a.eventIds);
    for (const m of out.merges) redirect.set(m.from, m.into);
    for (const sp of out.splits) {
      for (const mv of sp.moved) {
        const k = mentionKey(mv.articleId, mv.sentenceIndex);
        assigned.set(k, assigned.get(k)!.map((id) => (follow(redirect, id) === sp.from ? sp.into : id)));
      }
    }
  }
  return new Map([...assigned].map(([k, events]) => [k, [...new Set(events.map((id) => follow(redirect, id)))]]));
}

/** The event an id ends up in, following merges. */
function follow(redirect: ReadonlyMap<string, string>, id: string): string {
  let e = id;
  while (redirect.has(e)) e = redirect.get(e)!;
  return e;
}

function timed(run: () => Clustering): { clustering: Clustering; seconds: number } {
  const t0 = performance.now();
  const clustering = run();
  return { clustering, seconds: (performance.now() - t0) / 1000 };
}

function goldMemberships(input: EvalInput): Clustering {
  const out: Clustering = new Map();
  for (const g of input.gold) {
    const k = mentionKey(g.article, g.sentence);
    const list = out.get(k) ?? [];
    if (!list.includes(g.event)) list.push(g.event);
    out.set(k, list);
  }
  return out;
}

function restrict(c: Clustering, keep: (key: string) => boolean): Clustering {
  return new Map([...c].filter(([k]) => keep(k)));
}

/** Clusters of mentions by their first (primary) event. */
function partition(c: Clustering): string[][] {
  const by = new Map<string, string[]>();
  for (const [k, events] of c) by.set(events[0]!, [...(by.get(events[0]!) ?? []), k]);
  return [...by.values()];
}

function toSets(c: Clustering): Map<string, Set<string>> {
  return new Map([...c].map(([k, v]) => [k, new Set(v)]));
}

function samePartition(a: Clustering, b: Clustering): boolean {
  const canon = (c: Clustering) => partition(c).map((x) => [...x].sort().join(' ')).sort().join('\n');
  return canon(a) === canon(b);
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
