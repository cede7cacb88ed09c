/**
 * The report's rows derived from the runs: a system's best threshold and regret, the
 * overall row across corpora, the stories scored as a clustering of articles, and mention
 * detection against the gold.
 */
import type { ArticleOutcome } from '../pipeline/index.js';
import type { Clustering } from './baselines.js';
import { follow, partition } from './clusterings.js';
import type { EvalInput } from './eval-input.js';
import type { Best, CorpusReport, OverallRow, SettingResult, StoryScore, SystemResult } from './eval-report.js';
import { type Score, f1, scorePartitions } from './partition-metrics.js';
import type { Setting } from './prepare-mentions.js';

/** The best CoNLL and extended BCubed over the sweep, and the regret of the configured threshold. */
export function bestOf(
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

export function overall(setting: Setting, reports: readonly CorpusReport[]): OverallRow {
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
export function storyScore(outcomes: readonly ArticleOutcome[], input: EvalInput): StoryScore | null {
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

export function detectionScore(gold: Clustering, system: Clustering, inScope: (k: string) => boolean): Score {
  const g = [...gold.keys()].filter(inScope);
  const s = [...system.keys()].filter(inScope);
  const sys = new Set(s);
  const hit = g.filter((k) => sys.has(k)).length;
  const recall = g.length ? hit / g.length : 0;
  const precision = s.length ? hit / s.length : 0;
  return { recall, precision, f1: f1(recall, precision) };
}
