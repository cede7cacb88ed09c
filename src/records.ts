/**
 * The typed records that pass between pipeline stages. Names follow the architecture
 * guide: Article, Sentence, Mention, Event, Link.
 */

/** A news item as read from a feed or push, normalised and ready for splitting. */
export interface Article {
  /** Stable id: the source's guid/id/url when it is absolute, else `<outlet key>:<guid>`. */
  id: string;
  /** The publishing outlet's display name (the feed's title unless configured). */
  outlet: string;
  url: string | null;
  title: string;
  /** Publication time, RFC 3339 in UTC; null when the source gives none or an unreadable one. */
  published: string | null;
  /** When Strandline read the item, RFC 3339 in UTC. */
  fetched: string;
  /** BCP 47 language tag from the source, when given. */
  language: string | null;
  /** Plain text body: paragraphs separated by a blank line. */
  text: string;
  /** SHA-256 of the normalised body text, hex; equal hashes mean verbatim copies. */
  contentHash: string;
  /** Id of the earlier article this one copies (syndicated wire copy, verbatim or lightly edited), or null. */
  duplicateOf: string | null;
  /**
   * How alike the copy is to its original: 1 for a verbatim copy, else the estimated
   * Jaccard similarity of their 4-word shingles (MinHash). Absent or null when not a copy.
   */
  copySimilarity?: number | null;
  /** Where the item came from (file path or URL), for operators. */
  source: string;
  /**
   * Sentences supplied already split (evaluation input, whose gold indices must line up);
   * the text stage then analyses them as given instead of splitting `text`.
   */
  presplit?: readonly string[];
}

/** One sentence of an article. */
export interface Sentence {
  articleId: string;
  /** 0-based position among the article's sentences. */
  index: number;
  text: string;
  /** Character span [start, end) in Article.text. */
  start: number;
  end: number;
}

/** A day range, inclusive, as ISO dates (YYYY-MM-DD). */
export interface DayRange {
  start: string;
  end: string;
}

/** A time expression found in a sentence and resolved against the article's date. */
export interface TimeExpression extends DayRange {
  /** The words as they stand in the sentence. */
  text: string;
}

/** What the text stage learns about a sentence. */
export interface SentenceAnalysis {
  sentence: Sentence;
  /** Normalised content terms (lower-case lemmas) for the embedder. */
  terms: string[];
  /** Proper-noun phrases, titles and numbers with units, as written. */
  participants: string[];
  /** Proper-noun phrases that follow a locative preposition (in, at, near ...). */
  places: string[];
  times: TimeExpression[];
  /** Features the event-sentence scorer reads. */
  cues: SentenceCues;
}

/** Surface cues of event-ness, counted by the text stage. */
export interface SentenceCues {
  pastVerbs: number;
  eventWords: number;
  modalOrFuture: number;
  opinionWords: number;
  isQuestion: boolean;
  /** The sentence is mostly a direct quotation. */
  quoteShare: number;
  /** A time expression resolves to more than a year before publication (background). */
  distantPast: boolean;
  tokens: number;
  /** Noun phrases pointing back at a happening told before ("the move", "this deal"). */
  backReferences: number;
}

/** A sentence judged to report a concrete event. */
export interface Mention {
  articleId: string;
  sentenceIndex: number;
  text: string;
  outlet: string;
  /** The article's publication time (or fetch time when it has none), RFC 3339. */
  published: string;
  /** Event-ness score in [0, 1]. */
  eventness: number;
  participants: string[];
  places: string[];
  times: TimeExpression[];
  terms: string[];
  /** True when the article is a verbatim copy of another (independent confirmations exclude it). */
  isCopy: boolean;
  /**
   * True when the sentence points back at a happening its article told before ("the move"):
   * the linker then also links it to the best of its article's earlier events. Absent on
   * stored mentions, which are linked already.
   */
  refersBack?: boolean;
}

/** A sparse vector: sorted feature indices with their values. L2-normalised. */
export interface SparseVector {
  kind: 'sparse';
  indices: Uint32Array;
  values: Float32Array;
}

/** A dense vector, L2-normalised. */
export interface DenseVector {
  kind: 'dense';
  values: Float32Array;
}

/** What an embedder produces. */
export type Vector = SparseVector | DenseVector;

/** A mention with its vector. */
export interface EmbeddedMention extends Mention {
  vector: Vector;
}

/** Why a mention was linked to an event: what an analyst needs to judge the link. */
export interface LinkEvidence {
  /** Cosine similarity between the mention and the event's centroid. */
  similarity: number;
  /** Multiplier from the time gap (1 = same time, 0.5 = one half-life apart). */
  timeDecay: number;
  /** Days between the mention's time and the event's time span (0 when they overlap). */
  timeGapDays: number;
  /** Participants the mention shares with the event. */
  sharedParticipants: string[];
  /** Places the mention shares with the event. */
  sharedPlaces: string[];
  /** Bonus added for shared rare participants and places. */
  overlapBonus: number;
  /** True when the mention opened the event rather than joining it. */
  opened: boolean;
  /**
   * True when the event belongs to another story than the mention's article: such a link
   * needed a higher score (link.crossStoryMargin). Absent on links made before stories.
   */
  crossStory?: boolean;
  /** How much the event's size raised the score (link.sizePrior); absent when it did not. */
  sizeFactor?: number;
  /** The share of the score kept because the mention's own article opened the event (link.sameArticleFactor). */
  sameArticleFactor?: number;
  /** Set when an analyst's correction put the link here (the correction's id in the audit log). */
  correctedBy?: string;
  /** True when the sentence and the event each name people or places but share none of them. */
  conflictingNames?: boolean;
  /**
   * True when the sentence points back at the event ("the move") and the link was made for
   * that, to an event its own article reported before (link.backReferences). Such a link
   * leaves the event as it was: it is not counted among the event's mentions.
   */
  refersBack?: boolean;
  /**
   * The score the link had to reach: the threshold as calibrated on the stream at the
   * time, plus link.crossStoryMargin for an event of another story sharing no name.
   */
  bar?: number;
  /**
   * For a sentence that opened its event: the nearest known event, its score and the bar it
   * fell short of. Absent when no event was a candidate (and on links made before it was kept).
   */
  nearest?: { eventId: string; score: number; bar: number };
}

/** A mention → event link with its score and evidence. */
export interface Link {
  articleId: string;
  sentenceIndex: number;
  eventId: string;
  /** Final score in [0, 1]; for an opening mention, its event-ness. */
  score: number;
  /** 0 for the best link of the sentence, 1.. for further events the same sentence reports. */
  rank: number;
  evidence: LinkEvidence;
}

/** An event as stored and served. */
export interface EventRecord {
  id: string;
  label: string;
  firstSeen: string;
  lastSeen: string;
  /** The story the event belongs to (the story of the article that opened it), or null. */
  story: string | null;
  /** Earliest and latest day the event's mentions place it on. */
  timeStart: string;
  timeEnd: string;
  participants: string[];
  places: string[];
  outlets: string[];
  mentionCount: number;
  version: number;
}
