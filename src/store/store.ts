/**
 * The Store contract: everything Strandline keeps. One contract, several implementations
 * (the embedded SQLite store; Redis, alone or as a cluster, for several processes), all
 * held to the same contract test suite. Stages never see a concrete store; each sees the
 * narrow part it needs (ArticleLog, LinkingState, EventQueries, Outbox, ...). Over 350
 * lines because the records the parts exchange are defined once, beside them.
 */
import type { ReviewCandidate, Stratum, StratumDesign } from '../review/sampling.js';
import type { Article, EmbeddedMention, EventRecord, Link, LinkEvidence, Mention, TimeExpression, Vector } from '../records.js';
import type { StoryRecord } from '../link/story-state.js';
import type { AlertRule } from '../notify/alert-rules.js';

/** One sentence as committed, with its event-ness. */
export interface StoredSentence {
  index: number;
  text: string;
  start: number;
  end: number;
  eventness: number;
}

/** An event's new state: the public record plus the linker's opaque state. */
export interface EventUpdate {
  record: EventRecord;
  /** Per outlet: mentions, and mentions that are not from copies of other articles. */
  outlets: { outlet: string; mentions: number; independent: number }[];
  /** Serialised linker state (centroid etc.); the store keeps it as bytes. */
  state: Uint8Array;
}

/** A story's new state: its public record plus the story linker's opaque state. */
export interface StoryUpdate {
  record: StoryRecord;
  state: Uint8Array;
}

/** One merge of two stories (by consolidation, or an analyst's): `from`'s articles and events move to `into`, and `from` leaves. */
export interface StoryMergeCommit {
  into: StoryUpdate;
  from: string;
  score: number;
  at: string;
  messages: OutboxMessage[];
  /** An analyst's merge: its audit record, kept in the same commit. */
  correction?: CorrectionRecord;
}

/**
 * The undo of an analyst's story merge: `from` comes back with its articles and events, the
 * stories that had been merged into it point at it again, `into` takes its earlier state.
 */
export interface StoryUnmergeCommit {
  from: StoryUpdate;
  into: StoryUpdate;
  articles: string[];
  events: string[];
  /** Stories merged into `from` before (re-pointed to `into` by the merge). */
  earlier: string[];
  correction: CorrectionRecord;
  messages: OutboxMessage[];
}

/**
 * One consolidation split of a story: the `moved` articles leave `from` for the new story
 * `into`, with the events first reported in them (their new states), and the split is recorded.
 */
export interface StorySplitCommit {
  from: StoryUpdate;
  into: StoryUpdate;
  /** The ids of the articles that move. */
  moved: string[];
  /** The events that move with them: their new records and states (the story is part of both). */
  events: EventUpdate[];
  score: number;
  at: string;
  messages: OutboxMessage[];
  /** An analyst's split: its audit record, kept in the same commit. */
  correction?: CorrectionRecord;
}

/** The undo of an analyst's story split: the moved articles and events go back to `from`, the new story `into` leaves. */
export interface StoryUnsplitCommit {
  from: StoryUpdate;
  into: string;
  moved: string[];
  /** The events that go back, as they were (their story is `from` again). */
  events: EventUpdate[];
  correction: CorrectionRecord;
  messages: OutboxMessage[];
}

/** One article of a story as consolidation reads it back to divide the story. */
export interface StoryMember {
  articleId: string;
  title: string;
  outlet: string;
  /** Publication (or fetch) time, RFC 3339. */
  published: string;
  isCopy: boolean;
  /** Participants and places the article named. */
  names: string[];
  /** The whole article's vector it joined the story with; null once its text was erased. */
  vector: Vector | null;
}

/**
 * A notification, written in the transaction of the change it reports (transactional
 * outbox) to the notification log; the dispatcher then hands it to the subscriptions whose
 * rules select it (Subscriptions.fanOut).
 */
export interface OutboxMessage {
  /** Stable id (`msg_...`), the Standard Webhooks `webhook-id`; the same change gives the same id. */
  id: string;
  type: string;
  /** JSON body, already serialised so the signature covers exactly these bytes. */
  body: string;
  created: string;
}

/** One consolidation merge, committed atomically: `from` disappears into `into`. */
export interface MergeCommit {
  into: EventUpdate;
  from: string;
  score: number;
  at: string;
  messages: OutboxMessage[];
}

/**
 * One consolidation split, committed atomically: the mentions in `moved` leave `from` for
 * the new event `into`; `from` stays with the rest.
 */
export interface SplitCommit {
  from: EventUpdate;
  into: EventUpdate;
  moved: { articleId: string; sentenceIndex: number }[];
  score: number;
  at: string;
  messages: OutboxMessage[];
}

/** A split as recorded: `into` was opened from part of `from`'s mentions. */
export interface SplitRecord {
  from: string;
  into: string;
  /** Mentions that moved. */
  mentions: number;
  /** How alike the two parts were (centroid cosine x time decay); below the split threshold. */
  score: number;
  at: string;
}

/** A mention as linked to an event, with what the linker needs to rebuild the event. */
export interface LinkedMention {
  /** The vector is null once retention has erased the mention's text (the vector would give the words away). */
  mention: Omit<EmbeddedMention, 'vector'> & { vector: Vector | null };
  rank: number;
  score: number;
  /** The link is a back-reference (LinkEvidence.refersBack): it weighs nothing in the event. */
  refersBack?: boolean;
}

/** One of a shared mention's two links. */
export interface SharedLink {
  rank: number;
  score: number;
  /** A back-reference (LinkEvidence.refersBack). */
  refersBack?: boolean;
}

/** A mention linked to two events, with both links. */
export interface SharedMention {
  mention: LinkedMention['mention'];
  links: [SharedLink, SharedLink];
}

/** A merge as recorded. */
export interface MergeRecord {
  from: string;
  into: string;
  score: number;
  at: string;
}

/** Everything one article changes, committed atomically. */
export interface ArticleCommit {
  article: Article;
  /** The article URL's canonical form (ingest/canonical-url.ts), by which the same article reached through another link is found; null without a URL. */
  canonicalUrl: string | null;
  /** The story the article joined or opened (null when it has none). */
  storyId?: string | null;
  /** That story's new state, when this commit is the last in its group to change it. */
  story?: StoryUpdate | null;
  /** What the article brought to its story (its whole-text vector, its names), kept so a story can be divided later. */
  storyInput?: { vector: Vector; names: readonly string[] } | null;
  sentences: StoredSentence[];
  /** The article's MinHash sketch (copy detection), or null. */
  sketch?: Uint32Array | null;
  /** With its vector when it has one (kept for consolidation's splits). */
  mentions: (Mention & { vector?: Vector })[];
  links: Link[];
  events: EventUpdate[];
  /** Document-frequency increments of the TF-IDF embedder. */
  idf: { docs: number; df: Map<number, number> } | null;
  /** Increments of the linker's tally of best-candidate scores (its stream calibration). */
  tally?: LinkTally | null;
  messages: OutboxMessage[];
  /**
   * This article completes a consolidation interval: with it, the store records a pass as
   * owed (at the stored-article count), so that a pass a failure cut short is run on resume.
   */
  consolidationDue?: boolean;
}

/** The linker's count of mentions scored and of those whose best candidate scored high (link/calibration.ts). */
export interface LinkTally {
  mentions: number;
  high: number;
}

/** What happened to a commit. */
export type CommitResult = 'stored' | 'already-stored';

/** A polled feed: what the operator asked for, and how polling it has gone. */
export interface FeedEntry {
  /** `fd_` and 16 hex digits of the URL's SHA-256. */
  id: string;
  url: string;
  /** Outlet name to use instead of the feed's own title, or null. */
  outlet: string | null;
  intervalSeconds: number;
  paused: boolean;
  /** Listed in the configuration file (re-read at each start) or added through the API. */
  origin: 'config' | 'api';
  added: string;
  state: FeedState;
}

/** How polling one feed has gone. */
export interface FeedState {
  /** Validators of the last 200 answer, sent back as If-None-Match / If-Modified-Since. */
  etag: string | null;
  lastModified: string | null;
  nextPollAt: string;
  lastPollAt: string | null;
  lastSuccessAt: string | null;
  lastStatus: number | null;
  lastError: string | null;
  /** Failed polls in a row (the backoff grows with it). */
  failures: number;
  requests: number;
  notModified: number;
  bytes: number;
  /** Items read from the feed, counting repeats, and items not stored before. */
  itemsSeen: number;
  itemsNew: number;
  /** Publication to ingest, ms, of the latest new items (at most 101 kept). */
  delaysMs: number[];
}

/** The state of a feed never polled yet, first due at `nextPollAt`. */
export function newFeedState(nextPollAt: string): FeedState {
  return {
    etag: null,
    lastModified: null,
    nextPollAt,
    lastPollAt: null,
    lastSuccessAt: null,
    lastStatus: null,
    lastError: null,
    failures: 0,
    requests: 0,
    notModified: 0,
    bytes: 0,
    itemsSeen: 0,
    itemsNew: 0,
    delaysMs: [],
  };
}

/** Linker state as persisted. */
export interface LinkerSnapshot {
  events: Uint8Array[];
  idf: { docs: number; df: [number, number][] };
  tally: LinkTally;
  stories: Uint8Array[];
  /** Story merges made, [from, into], oldest first (events keep the story that opened them). */
  storyMerges: [string, string][];
}

/** The words of a list query's `text` that must all appear: at most 8, split on white space (both backends). */
export function searchWords(text: string | undefined): string[] {
  return (text ?? '').split(/\s+/).filter(Boolean).slice(0, 8);
}

/** Filters for listing events. */
export interface EventQuery {
  /** Events active on or after this day (YYYY-MM-DD or RFC 3339). */
  from?: string | undefined;
  /** Events active on or before this day. */
  to?: string | undefined;
  outlet?: string | undefined;
  /** Words that must appear in the label or in one of the event's sentences. */
  text?: string | undefined;
  /** Only events reported by at least this many outlets. */
  minOutlets?: number | undefined;
  /** Only events with a participant whose name holds these words (any case). */
  participant?: string | undefined;
  /** Only events with a place whose name holds these words (any case). */
  place?: string | undefined;
  /** Only events of this story (after its merges). */
  story?: string | undefined;
  /** Order: most recent activity first (default), most outlets, or most mentions. */
  sort?: 'recent' | 'outlets' | 'mentions' | undefined;
  limit: number;
  offset: number;
}

/** One row of an event list. */
export interface EventSummary extends EventRecord {
  /** Outlets with at least one mention that is not a verbatim copy. */
  independentOutlets: number;
}

/** A page of events. */
export interface EventPage {
  total: number;
  events: EventSummary[];
}

/** Filters for listing stories. */
export interface StoryQuery {
  /** Stories active on or after this day (YYYY-MM-DD or RFC 3339). */
  from?: string | undefined;
  to?: string | undefined;
  outlet?: string | undefined;
  /** Words that must appear in the story's label or names. */
  text?: string | undefined;
  /** Only stories with an event whose participants include a name holding these words (any case). */
  participant?: string | undefined;
  /** Only stories with an event whose places include a name holding these words (any case). */
  place?: string | undefined;
  minOutlets?: number | undefined;
  /** Most recent activity first (default), most outlets, or most articles. */
  sort?: 'recent' | 'outlets' | 'articles' | undefined;
  limit: number;
  offset: number;
}

/** One row of a story list. */
export interface StorySummary extends StoryRecord {
  /** Events the story holds now. */
  eventCount: number;
}

/** A page of stories. */
export interface StoryPage {
  total: number;
  stories: StorySummary[];
}

/** One article of a story, for its lanes and timeline. */
export interface StoryArticleRow {
  id: string;
  title: string;
  outlet: string;
  url: string | null;
  published: string | null;
  /** A copy (verbatim or lightly edited) of this earlier article, or null. */
  duplicateOf: string | null;
}

/** A story merge as recorded. */
export interface StoryMergeRecord {
  from: string;
  into: string;
  score: number;
  at: string;
}

/** A story with its events and articles. */
export interface StoryDetail {
  story: StorySummary;
  /** Its events, earliest first. */
  events: EventSummary[];
  /** Its articles, earliest first. */
  articles: StoryArticleRow[];
  /** Stories consolidation merged into this one. */
  merges: StoryMergeRecord[];
  /** Splits this story took part in (split off it, or it split off another), oldest first. */
  splits: StorySplitRecord[];
}

/** One story split as recorded: `articles` articles left `from` for the new story `into`. */
export interface StorySplitRecord {
  from: string;
  into: string;
  articles: number;
  score: number;
  at: string;
}

/** One mention of an event, as shown to an analyst. */
export interface EventMention {
  articleId: string;
  articleTitle: string;
  articleUrl: string | null;
  outlet: string;
  published: string;
  isCopy: boolean;
  sentenceIndex: number;
  /** Null once retention has erased the text. */
  text: string | null;
  score: number;
  rank: number;
  evidence: LinkEvidence;
  times: TimeExpression[];
}

/** An event with all its mentions. */
export interface EventDetail {
  event: EventSummary;
  mentions: EventMention[];
  /** Events consolidation merged into this one. */
  merges: MergeRecord[];
  /** Splits this event took part in: events split off it, or the event it was split from. */
  splits: SplitRecord[];
}

/** A sentence of an article with its links. */
export interface ArticleSentence extends StoredSentence {
  isMention: boolean;
  links: { eventId: string; eventLabel: string; score: number; rank: number; evidence: LinkEvidence }[];
}

/** An article with its sentences and their links. */
export interface ArticleDetail {
  article: Omit<Article, 'text'> & { text: string | null; story: string | null };
  sentences: ArticleSentence[];
}

/** Row counts. */
export interface StoreCounts {
  articles: number;
  sentences: number;
  mentions: number;
  links: number;
  events: number;
  stories: number;
}

/** One notification's delivery to one subscription, with how its attempts went. */
export interface Delivery {
  messageId: string;
  /** The subscription's name. */
  subscriber: string;
  type: string;
  body: string;
  created: string;
  /** The alert rule that selected it (null for deliveries queued before rules). */
  rule: string | null;
  attempts: number;
  /** When it is due (pending), or when it settled (delivered or dead). */
  nextAt: string;
  status: 'pending' | 'delivered' | 'dead';
  lastError: string | null;
  /** How long the last attempt took, ms (null before the first). */
  latencyMs: number | null;
}

/** The outcome of one delivery attempt. */
export interface AttemptOutcome {
  status: Delivery['status'];
  attempts: number;
  nextAt: string;
  error: string | null;
  latencyMs: number;
}

/** A webhook subscription: where signed notifications go and which ones (its alert rules). */
export interface Subscription {
  /** Unique; names the subscription in the API, the logs and every delivery. */
  name: string;
  url: string;
  /** Standard Webhooks secret (`whsec_...`). */
  secret: string;
  /** The secret a rotation replaced, still signed with (beside the new one) until `until`. */
  previous: { secret: string; until: string } | null;
  rules: AlertRule[];
  /** Paused: nothing is queued or sent until resumed; what came meanwhile is then delivered. */
  paused: boolean;
  /** Listed in the configuration file (kept in line with it at each start) or made through the API. */
  origin: 'config' | 'api';
  created: string;
}

/** The subscriptions, and the hand-over of notifications to them. */
export interface Subscriptions {
  /** Every subscription, in the order made, each with the log number its rules have been applied up to. */
  listSubscriptions(): Promise<(Subscription & { cursor: number })[]>;
  /** Adds a subscription whose rules apply from log number `cursor` on; false, and nothing written, when the name is taken. */
  addSubscription(s: Subscription, cursor: number): Promise<boolean>;
  /** Adds or replaces one (a replaced one keeps its place in the log; a new one starts at `cursor`). */
  putSubscription(s: Subscription, cursor: number): Promise<void>;
  /** Changes one atomically (`change` may run more than once); null, and nothing written, when there is none. */
  updateSubscription(name: string, change: (s: Subscription) => Subscription): Promise<Subscription | null>;
  /** Removes one and its place in the log (its deliveries left are given up by the dispatcher); false when there was none. */
  deleteSubscription(name: string): Promise<boolean>;
  /**
   * Queues deliveries of the notifications the subscription's rules selected between log
   * numbers `from` (exclusive) and `to`, and moves its place to `to`: all or nothing, and
   * only while its place is still `from` (false otherwise: another pass did it first). A
   * delivery already queued stays as it is.
   */
  fanOut(name: string, from: number, to: number, deliveries: readonly { messageId: string; rule: string }[], now: string): Promise<boolean>;
  /** One subscription's deliveries, newest notification first, optionally of one status. */
  subscriptionDeliveries(name: string, limit: number, status?: Delivery['status']): Promise<Delivery[]>;
  /** Makes a subscription's dead letters due again at `now`, attempts counted afresh (same webhook-id); returns how many. */
  replayDeadLetters(name: string, now: string): Promise<number>;
}

/** The articles as committed: admission's lookups and the commits of the link stage, one transaction per group. */
export interface ArticleLog {
  /** True when an article with this id is stored. */
  hasArticle(id: string): Promise<boolean>;
  /** Id of the stored article whose URL has this canonical form (canonical-url.ts), if any. */
  findByUrl(canonical: string): Promise<string | null>;
  /** Id of the earliest stored article with this content hash, if any. */
  findByContentHash(hash: string): Promise<string | null>;
  /** Commits one article's results in one transaction; a second commit of the same id changes nothing. */
  commitArticle(c: ArticleCommit): Promise<CommitResult>;
  /** Commits several articles in one transaction (all or none), each as commitArticle would. */
  commitArticles(cs: readonly ArticleCommit[]): Promise<CommitResult[]>;
  /**
   * MinHash sketches of the articles published (or fetched) within `days` before the newest
   * stored one, oldest first, with their time in ms (to rebuild the copy index).
   */
  recentSketches(days: number): Promise<{ id: string; time: number; sketch: Uint32Array }[]>;
}

/** What linking and consolidation read and write besides article commits: event and story states, merges and splits. */
export interface LinkingState {
  /** Merges one event into another: links move, the absorbed event leaves, the merge is recorded. */
  commitMerge(m: MergeCommit): Promise<void>;
  /** Moves part of an event's mentions to a new event; both events' states are written, the split is recorded. */
  commitSplit(s: SplitCommit): Promise<void>;
  /**
   * Replaces the linker states of stored events (the record and links stay as they are):
   * how consolidation keeps its marks on the events it examined without splitting them.
   * An event no longer stored is skipped.
   */
  putEventStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void>;
  /** The mentions linked to an event, oldest first (published, article, sentence). */
  linkedMentions(eventId: string): Promise<LinkedMention[]>;
  /**
   * The mentions linked to both events (a sentence's further links can reach two events that
   * later merge), each with its link to `a` and to `b`, oldest first. A merge keeps one link
   * per sentence, so the merged state must count these once.
   */
  linkedToBoth(a: string, b: string): Promise<SharedMention[]>;
  /** Events linked from the last `articles` stored articles (consolidation's working set). */
  recentEventIds(articles: number): Promise<string[]>;
  /**
   * The stored labels of these events (ids not stored are left out). The store owns
   * labels: erasing text relabels events, so notifications read labels here rather than
   * from the linker's memory.
   */
  eventLabels(ids: readonly string[]): Promise<Map<string, string>>;
  /** Merges one story into another: its articles and events move, it leaves, the merge is recorded. */
  commitStoryMerge(m: StoryMergeCommit): Promise<void>;
  /** The stories the last `articles` stored articles joined (after merges), most recent first. */
  recentStoryIds(articles: number): Promise<string[]>;
  /** Replaces the linker states of stored stories, as putEventStates does for events (a story no longer stored is skipped). */
  putStoryStates(states: readonly { id: string; state: Uint8Array }[]): Promise<void>;
  /** Divides a story: articles and the events first reported in them move to a new story, the split is recorded. */
  commitStorySplit(s: StorySplitCommit): Promise<void>;
  /** The articles filed under a story now, oldest first (published, then id), with what each brought to it. */
  storyMembers(storyId: string): Promise<StoryMember[]>;
  /** The stored-article count of the consolidation pass owed (recorded by a due commit, not yet settled), or null. */
  consolidationOwed(): Promise<number | null>;
  /** Settles the owed pass once a pass at `articles` (or later) has completed. */
  settleConsolidation(articles: number): Promise<void>;
}

/** What a starting linker reads back, and the vector space the store is bound to. */
export interface LinkerSnapshots {
  /** Everything the linker and embedder need to resume. */
  loadLinkerState(): Promise<LinkerSnapshot>;
  /**
   * Records the vector space (vector-space.ts) the store's vectors are made in, unless one
   * is recorded already; returns the one recorded (the given one, or the earlier one).
   */
  claimVectorSpace(space: string): Promise<string>;
}

/** What the API and the commands read: events, stories, articles, outlets and counts. */
export interface EventQueries {
  listEvents(q: EventQuery): Promise<EventPage>;
  getEvent(id: string): Promise<EventDetail | null>;
  /** Splits an event took part in, oldest first. */
  splitsOf(eventId: string): Promise<SplitRecord[]>;
  /** The event an absorbed event now lives in (following chains), or null. */
  mergedInto(id: string): Promise<string | null>;
  /** Merges into an event, oldest first. */
  mergesInto(id: string): Promise<MergeRecord[]>;
  listStories(q: StoryQuery): Promise<StoryPage>;
  getStory(id: string): Promise<StoryDetail | null>;
  /** The story a merged-away story now lives in (following chains), or null. */
  storyMergedInto(id: string): Promise<string | null>;
  getArticle(id: string): Promise<ArticleDetail | null>;
  /** Outlets with their article counts. */
  listOutlets(): Promise<{ outlet: string; articles: number }[]>;
  counts(): Promise<StoreCounts>;
}

/** Notifications waiting for delivery, their attempts and their pruning. */
export interface Outbox {
  /** Pending deliveries due at or before `now`, oldest first, leaving out those to the subscribers in `skip`. */
  dueDeliveries(now: string, limit: number, skip?: readonly string[]): Promise<Delivery[]>;
  /** Records the outcome of one delivery attempt. */
  recordAttempt(messageId: string, subscriber: string, outcome: AttemptOutcome): Promise<void>;
  /** Deliveries that gave up. */
  deadLetters(limit: number): Promise<Delivery[]>;
  /**
   * Deletes the delivery records settled (delivered or dead-lettered) before `before`, and
   * each notification none of whose deliveries is left (notifications that had no
   * subscriber too, once created before `before`). Pending deliveries and their
   * notifications are never touched. Returns how many notifications left.
   */
  pruneNotifications(before: string): Promise<number>;
  /**
   * The notification log, what the live stream reads: every notification in the order
   * written, numbered from 1 (a number is never reused, pruning or not), whether or not a
   * subscriber asked for it. Up to `limit` after number `after`, with the first number still
   * kept (null when none is) and the last number given.
   */
  notificationsAfter(after: number, limit: number): Promise<NotificationLog>;
}

/** A page of the notification log. */
export interface NotificationLog {
  items: LoggedNotification[];
  /** The oldest number still kept (pruning removes older ones), or null when the log is empty. */
  first: number | null;
  /** The last number given (0 before the first notification). */
  last: number;
}

/** One notification as logged. */
export interface LoggedNotification {
  seq: number;
  id: string;
  type: string;
  /** The JSON body webhooks receive. */
  body: string;
  created: string;
}

/** A sentence of an article. */
export interface SentenceKey {
  articleId: string;
  sentenceIndex: number;
}

/**
 * An event in a correction's image, without its label (sentence text, which an erasure
 * must be able to remove everywhere): the label is named by the sentence it is drawn from.
 */
export interface ImageEvent {
  record: Omit<EventRecord, 'label'>;
  /** The sentence the label was drawn from, or null (a placeholder label). */
  labelFrom: SentenceKey | null;
  outlets: EventUpdate['outlets'];
  /** The linker state, base64. */
  state: string;
}

/** The events a correction touches (null: not stored) and every link of the sentences it touches, at one moment. */
export interface CorrectionImage {
  events: Record<string, ImageEvent | null>;
  links: Link[];
  /** For a story merge: the two stories (null: not stored), and what `from` held. */
  stories?: Record<string, { record: StoryRecord; state: string } | null>;
  members?: { articles: string[]; events: string[]; earlier: string[] };
}

/** An analyst's correction as the audit log keeps it. */
export interface CorrectionRecord {
  /** `cr_` and 12 hex digits. */
  id: string;
  kind: 'merge' | 'split' | 'move' | 'detach' | 'merge-stories' | 'split-story' | 'threshold' | 'undo';
  /** Who made it: the API key's id, the operator's token, or `local` when nothing is checked. */
  by: string;
  at: string;
  note: string | null;
  /** The events (or stories) and sentences it is about (for a merge: [from, into]; otherwise [from, to]). */
  events: string[];
  mentions: SentenceKey[];
  /** For an undo: the correction it undid. */
  undoes: string | null;
  /** The undo that undid this correction, once one did. */
  undoneBy: string | null;
  before: CorrectionImage;
  after: CorrectionImage;
  /** What binds the linker while the correction stands: events never merged again, sentences never moved by consolidation. */
  binds: { apart: [string, string][]; pinned: SentenceKey[] };
  /** For a threshold adjustment (and its undo): the move of the link threshold it made. */
  threshold?: ThresholdMove;
}

/**
 * An operator's move of the link threshold, as the corrections log keeps it. Offsets are
 * added to the configured `link.threshold` (the stream calibration then works from there);
 * the newest adjustment still standing is the one in effect.
 */
export interface ThresholdMove {
  /** The offset in effect before, and the one it set. */
  from: number;
  to: number;
  /** The review round whose answers it was fitted to, or null when set by hand. */
  round: string | null;
  /** The fit's cross-validated F1 of the round's decisions at the old and new threshold, when fitted. */
  heldOutF1: { before: number; after: number } | null;
}

/** One correction, committed atomically: the touched sentences' links replaced, events written or removed, the record kept. */
export interface CorrectionCommit {
  record: CorrectionRecord;
  /** The sentences whose links are all replaced by `links`. */
  sentences: SentenceKey[];
  links: Link[];
  /** Events written as given, label included. */
  events: EventUpdate[];
  /** Events removed (no link of theirs is left). */
  removed: string[];
  messages: OutboxMessage[];
}

/** The audit log of corrections, and their commits. */
export interface Corrections {
  /** Commits a correction; an undo also marks the correction it undoes. */
  commitCorrection(c: CorrectionCommit): Promise<void>;
  /** Corrections, newest first. */
  listCorrections(limit: number, offset: number): Promise<{ total: number; corrections: CorrectionRecord[] }>;
  getCorrection(id: string): Promise<CorrectionRecord | null>;
  /** Undoes an analyst's story merge (the merge itself goes through commitStoryMerge with its record). */
  commitStoryUnmerge(u: StoryUnmergeCommit): Promise<void>;
  /** Undoes an analyst's story split (the split itself goes through commitStorySplit with its record). */
  commitStoryUnsplit(u: StoryUnsplitCommit): Promise<void>;
}

/** What an API key lets its holder do (api/access.ts). */
export type Scope = 'read' | 'push' | 'manage' | 'admin';

/** An API key as stored: never the key itself, only its SHA-256. */
export interface ApiKey {
  /** `key_` and 12 hex digits; names the key in the API, the command line and the logs. */
  id: string;
  name: string;
  scopes: Scope[];
  /** SHA-256 of the key, hex. */
  hash: string;
  created: string;
}

/** The API keys, shared by every api process. */
export interface ApiKeys {
  /** Every key, in the order made. */
  listApiKeys(): Promise<ApiKey[]>;
  addApiKey(k: ApiKey): Promise<void>;
  /** Revokes a key; false when there was none. */
  deleteApiKey(id: string): Promise<boolean>;
}

/** A reviewer's answer about one item: the same event, another one, or cannot tell. */
export type ReviewVerdict = 'same' | 'different' | 'unsure';

/** One decision offered for review (review/sampling.ts), numbered within its round. */
export interface ReviewItem extends ReviewCandidate {
  item: number;
  stratum: Stratum;
}

/** A round of reviews: the sample drawn, how it was drawn, how many reviewers each item wants. */
export interface ReviewRound {
  id: string;
  created: string;
  /** Who drew it (API key id, or local). */
  by: string;
  margin: number;
  seed: number;
  reviewersPerItem: number;
  design: StratumDesign[];
  items: ReviewItem[];
}

export interface ReviewAnswer {
  round: string;
  item: number;
  reviewer: string;
  verdict: ReviewVerdict;
  at: string;
}

/** Review rounds and their answers, shared by every api process. */
export interface Reviews {
  addReviewRound(r: ReviewRound): Promise<void>;
  /** Every round, newest first, without their items. */
  listReviewRounds(): Promise<Omit<ReviewRound, 'items'>[]>;
  getReviewRound(id: string): Promise<ReviewRound | null>;
  /** Records an answer; a reviewer's later answer about the same item replaces the earlier one. */
  putReviewAnswer(a: ReviewAnswer): Promise<void>;
  reviewAnswers(round: string): Promise<ReviewAnswer[]>;
}

/** The polled feeds and their state, shared by every api process. */
export interface FeedRegistry {
  /** Every polled feed, in the order added. */
  listFeeds(): Promise<FeedEntry[]>;
  /** Adds or replaces one polled feed. */
  putFeed(f: FeedEntry): Promise<void>;
  /**
   * Changes one stored feed atomically: `change` gets the entry as stored and returns the
   * new one (it may run more than once when another process writes the feed meanwhile).
   * Null, and nothing written, when the feed is not stored.
   */
  updateFeed(id: string, change: (f: FeedEntry) => FeedEntry): Promise<FeedEntry | null>;
  /** Removes one polled feed; false when there was none. */
  deleteFeed(id: string): Promise<boolean>;
}

/** Erasing stored text on the operator's say, and compacting what it leaves. */
export interface Retention {
  /** Erases article and sentence text of articles published before `day`; returns how many articles. */
  eraseTextBefore(day: string): Promise<number>;
  /** Erases one article's stored text (body, sentences, labels drawn from them); links stay. */
  eraseArticleText(id: string): Promise<boolean>;
  /**
   * Rewrites storage so that text erased so far leaves the disk too, not only the records
   * (a database keeps stale copies in free space until it is rebuilt). Costs time in
   * proportion to the store's size; callers run it after erasures, not after every one.
   */
  compact(): Promise<void>;
}

/** The connection itself. */
export interface StoreConnection {
  /**
   * True when the store cannot be reached now (Redis down or reconnecting), or when `err`
   * (from one of this store's calls) says so; the API then answers 503 at once. Always
   * false for an embedded store.
   */
  unavailable(err?: unknown): boolean;
  close(): Promise<void>;
}

/**
 * The storage contract: every store (SQLite, Redis, Redis Cluster) implements all of it, and
 * `test/contract/store-contract.ts` holds each to it. A part of the program that needs one
 * concern takes that narrower interface.
 */
export interface Store
  extends
    ArticleLog,
    LinkingState,
    LinkerSnapshots,
    EventQueries,
    Outbox,
    Subscriptions,
    ApiKeys,
    Reviews,
    Corrections,
    FeedRegistry,
    Retention,
    StoreConnection {}
