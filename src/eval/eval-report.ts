/**
 * What `strandline eval` reports (report.json holds exactly this): per corpus and setting,
 * each system's scores, the linker's sweep and stories, and the overall rows.
 */
import type { PairKind, PairScores } from './pairwise-links.js';
import type { PartitionScores, Score } from './partition-metrics.js';
import type { Setting } from './prepare-mentions.js';

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
