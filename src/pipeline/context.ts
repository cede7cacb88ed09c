/**
 * The records the pipeline's stages pass along and what they are handed: the context, the
 * outcome of each article, and a Flow (work going on, or an article already finished).
 */
import { type DetectedArticle, type MentionSelection } from '../detect/detect-mentions.js';
import type { Embedder } from '../embed/embedder.js';
import type { ConsolidationContext, MergeOutcome, SplitOutcome, StorySplitOutcome } from '../link/consolidate.js';
import type { Article, EmbeddedMention, Vector } from '../records.js';
import { type StoryArticle } from '../link/story-state.js';
import { type AnalysisPool } from '../text/analysis-pool.js';
import type { Nlp } from '../text/nlp.js';
import type { CopyDetector } from '../copies/copy-detector.js';

/** What the pipeline is handed (the linkers and the store with it: what consolidation works with too). */
export interface PipelineContext extends ConsolidationContext {
  nlp: Nlp;
  embedder: Embedder;
  /** Analysis threads; without them articles are analysed on the main thread with `nlp`. */
  analysis?: AnalysisPool;
  /** Overrides which sentences become mentions (evaluation); live use leaves it unset. */
  selectMentions?: (article: Article) => MentionSelection;
  /** Recent articles' MinHash sketches, to recognise edited copies; without it only verbatim copies are. */
  copies?: CopyDetector;
}

/** What became of one article. */
export interface ArticleOutcome {
  articleId: string;
  outlet: string;
  status: 'stored' | 'duplicate' | 'rejected';
  reason: string | null;
  duplicateOf: string | null;
  sentences: number;
  mentions: number;
  links: number;
  opened: number;
  outletsAdded: number;
  /** Each linked sentence (-1: the whole article) with its events, best first. */
  assignments: { sentenceIndex: number; eventIds: string[] }[];
  /** Merges consolidation made after this article (event `from` now lives in `into`). */
  merges: MergeOutcome[];
  /** Splits consolidation made after this article (the `moved` mentions left `from` for the new event `into`). */
  splits: SplitOutcome[];
  /** The story the article joined or opened (null when not stored). */
  story: string | null;
  /** Whether the article opened its story. */
  storyOpened: boolean;
  /** Story merges consolidation made after this article (story `from` now lives in `into`). */
  storyMerges: MergeOutcome[];
  /** Story splits consolidation made after this article (the `moved` articles left `from` for the new story `into`). */
  storySplits: StorySplitOutcome[];
}

/** An article still on its way (`go`), or one that has finished early (`done`). */
export type Flow<T> = { go: T; done?: undefined } | { go?: undefined; done: ArticleOutcome };

/** A detected article, with its mentions' vectors when a worker process embedded them already. */
export interface DetectedWork extends DetectedArticle {
  vectors?: Vector[];
}

export interface EmbeddedArticle extends DetectedArticle {
  embedded: EmbeddedMention[];
  /** What this article added to the TF-IDF document frequencies, committed with it. */
  idf: { docs: number; df: Map<number, number> } | null;
  /** The article as its story sees it; null when there is no vector to judge it by. */
  storyInput: StoryArticle | null;
}

/** An outcome with nothing stored yet (a rejection, a duplicate; a stored article's counts are filled in). */
export function outcomeOf(a: Article, status: ArticleOutcome['status'], reason: string | null): ArticleOutcome {
  return {
    articleId: a.id,
    outlet: a.outlet,
    status,
    reason,
    duplicateOf: a.duplicateOf,
    sentences: 0,
    mentions: 0,
    links: 0,
    opened: 0,
    outletsAdded: 0,
    assignments: [],
    merges: [],
    splits: [],
    story: null,
    storyOpened: false,
    storyMerges: [],
    storySplits: [],
  };
}
