/**
 * Every Redis key Strandline uses, built in one place. All keys of a partition start with
 * the hash tag `{strandline:<partition>}`, so on a Redis Cluster they share one slot: the
 * Lua scripts can touch any of them atomically, and one partition lives on one shard.
 * Several partitions (one per deployment or per desk) spread over the cluster's shards.
 */
import { StrandError } from '../../errors.js';

/** Partition names are plain words: no braces (they would change the hash tag) and no colons. */
const PARTITION = /^[A-Za-z0-9_-]{1,64}$/;

/** The key names of one partition. */
export interface Keyspace {
  /** `{strandline:<partition>}`: the common prefix, passed to every script. */
  readonly prefix: string;
  /** Hash of row counts (articles, sentences, mentions, links, events); also routes scripts to the slot. */
  readonly counts: string;
  readonly seq: string;
  /** Sorted set of article ids by commit order. */
  readonly articles: string;
  /** Sorted set of article ids by publication (or fetch) time, ms. */
  readonly articlesByTime: string;
  /** Hash: outlet → stored articles. */
  readonly outlets: string;
  /** Sorted set of event ids by last activity, ms. */
  readonly events: string;
  /** Hash: hashed TF-IDF feature → document frequency; and the document count. */
  readonly idf: string;
  readonly idfDocs: string;
  /** The linker's tally (link/calibration.ts): a hash of mentions and high. */
  readonly linkTally: string;
  /** The notification log: a counter, the sorted set of message ids by number, and those no subscriber asked for by time (ms, for pruning). */
  readonly outboxSeq: string;
  readonly outboxLog: string;
  readonly outboxUnsubscribed: string;
  /** The stored-article count of the consolidation pass owed (set by a due commit, cleared when a pass completes). */
  readonly consolidationOwed: string;
  /** Hash: absorbed event id → JSON {into, score, at}. */
  readonly merges: string;
  /** Hash: event opened by a split → JSON {from, mentions, score, at}. */
  readonly splits: string;
  /** Hash: feed id → JSON feed entry; sorted set of feed ids by the order added. */
  readonly feeds: string;
  readonly feedOrder: string;
  /** Hash: subscription name → JSON subscription; its place in the notification log; sorted set of names by when made. */
  readonly subscriptions: string;
  readonly subscriptionCursors: string;
  readonly subscriptionOrder: string;
  /** List of corrections an api process queued for the linker; each one's answer, kept a while. */
  readonly correctionRequests: string;
  correctionAnswer(request: string): string;
  /** Hash: correction id → JSON record; sorted set of ids by the order made; hash: correction id → the undo that undid it. */
  readonly corrections: string;
  readonly correctionOrder: string;
  readonly correctionUndone: string;
  /** Hash: API key id → JSON key record (its hash, not the key); sorted set of ids by when made. */
  readonly apiKeys: string;
  readonly apiKeyOrder: string;
  /** Hash: review round id → JSON (items included); sorted set: their order by creation. */
  readonly reviewRounds: string;
  readonly reviewRoundOrder: string;
  /** Hash per round: `${item}\n${reviewer}` → JSON answer. */
  reviewAnswers(round: string): string;
  /** Sorted set of one subscription's deliveries (`<message>\n<subscriber>`) by notification number. */
  subscriptionDeliveries(name: string): string;
  /** Hash: `<message>\n<subscriber>` → JSON delivery state; sorted sets of due and dead deliveries. */
  readonly deliveries: string;
  readonly due: string;
  readonly dead: string;
  /** Sorted set of delivered and dead deliveries by when they settled (for pruning); a flag once older ones are in it. */
  readonly settled: string;
  readonly settledIndexed: string;
  /** String: the vector space of the partition's vectors (vector-space.ts). */
  readonly vectorSpace: string;
  /** How many of the data migrations (migrate.ts) the partition has had. */
  readonly format: string;
  /** Sorted set of story ids by last activity, ms. */
  readonly stories: string;
  /** Hash: absorbed story id → `<into>\n<score>\n<at>`. */
  readonly storyMerges: string;
  /** Hash: record, label and state of a story. */
  story(id: string): string;
  /** Sorted set of a story's article ids by publication (or fetch) time, ms. */
  storyArticles(id: string): string;
  /** Set of a story's event ids. */
  storyEvents(id: string): string;
  /** Set of story ids merged into a story. */
  storyMergedInto(id: string): string;
  /** Hash: story opened by a split → JSON {from, articles, score, at}. */
  readonly storySplits: string;
  /** Set of the stories split off a story. */
  storySplitsOf(id: string): string;
  article(id: string): string;
  sentences(articleId: string): string;
  sentenceText(articleId: string): string;
  mentions(articleId: string): string;
  /** Hash: sentence index → the mention's vector (vector-codec bytes, base64). */
  mentionVectors(articleId: string): string;
  links(articleId: string): string;
  contentHash(hash: string): string;
  /** The article stored under a canonical URL. */
  articleUrl(canonical: string): string;
  event(id: string): string;
  /** Set of `<article>\n<sentence index>` linked to an event. */
  eventLinks(id: string): string;
  /** Set of event ids merged into an event. */
  mergedInto(id: string): string;
  /** Set of event ids split off an event. */
  splitOff(id: string): string;
  outbox(messageId: string): string;
  /** Stream of articles waiting for analysis (consumer group `workers`). */
  readonly intake: string;
  /** Stream of analysed articles waiting to be linked (consumer group `linkers`). */
  readonly analysed: string;
  /** Stream of intake entries that kept failing, with their last error. */
  readonly deadLetters: string;
  /** Hash: intake entry id → the analysed entry that answered it (a second answer is dropped). */
  readonly answered: string;
  /** The lease a linker holds to be the partition's only linker. */
  readonly linkerLease: string;
  /** The lease an api process holds to be the partition's only feed poller. */
  readonly pollLease: string;
  /** The last intake entry whose article the linker has committed. */
  readonly linkerPosition: string;
  /** Every key of the partition (for SCAN; tests and `dropPartition`). */
  readonly pattern: string;
}

/** The keyspace of `partition`; refuses names that would break the hash tag. */
export function keyspace(partition: string): Keyspace {
  if (!PARTITION.test(partition)) {
    throw new StrandError('STRAND_CONFIG_INVALID', `Redis partition "${partition}" must be 1 to 64 letters, digits, - or _`);
  }
  const p = `{strandline:${partition}}`;
  return {
    prefix: p,
    counts: `${p}:counts`,
    seq: `${p}:seq`,
    articles: `${p}:articles`,
    articlesByTime: `${p}:articles-by-time`,
    outlets: `${p}:outlets`,
    events: `${p}:events`,
    idf: `${p}:idf`,
    idfDocs: `${p}:idf-docs`,
    linkTally: `${p}:link-tally`,
    consolidationOwed: `${p}:consolidation-owed`,
    outboxSeq: `${p}:outbox-seq`,
    outboxLog: `${p}:outbox-log`,
    outboxUnsubscribed: `${p}:outbox-unsubscribed`,
    merges: `${p}:merges`,
    splits: `${p}:splits`,
    feeds: `${p}:feeds`,
    feedOrder: `${p}:feed-order`,
    subscriptions: `${p}:subscriptions`,
    subscriptionCursors: `${p}:subscription-cursors`,
    subscriptionOrder: `${p}:subscription-order`,
    correctionRequests: `${p}:correction-requests`,
    correctionAnswer: (request) => `${p}:correction-answer:${request}`,
    corrections: `${p}:corrections`,
    correctionOrder: `${p}:correction-order`,
    correctionUndone: `${p}:correction-undone`,
    apiKeys: `${p}:api-keys`,
    apiKeyOrder: `${p}:api-key-order`,
    reviewRounds: `${p}:review-rounds`,
    reviewRoundOrder: `${p}:review-round-order`,
    reviewAnswers: (round) => `${p}:review-answers:${round}`,
    subscriptionDeliveries: (name) => `${p}:subscription-deliveries:${name}`,
    deliveries: `${p}:deliveries`,
    due: `${p}:due`,
    dead: `${p}:dead`,
    settled: `${p}:settled`,
    settledIndexed: `${p}:settled-indexed`,
    vectorSpace: `${p}:vector-space`,
    format: `${p}:format`,
    stories: `${p}:stories`,
    storyMerges: `${p}:story-merges`,
    story: (id) => `${p}:story:${id}`,
    storyArticles: (id) => `${p}:story-articles:${id}`,
    storyEvents: (id) => `${p}:story-events:${id}`,
    storyMergedInto: (id) => `${p}:story-merged-into:${id}`,
    storySplits: `${p}:story-splits`,
    storySplitsOf: (id) => `${p}:story-splits-of:${id}`,
    article: (id) => `${p}:article:${id}`,
    sentences: (id) => `${p}:sentences:${id}`,
    sentenceText: (id) => `${p}:sentence-text:${id}`,
    mentions: (id) => `${p}:mentions:${id}`,
    mentionVectors: (id) => `${p}:mention-vectors:${id}`,
    links: (id) => `${p}:links:${id}`,
    contentHash: (h) => `${p}:content-hash:${h}`,
    articleUrl: (u) => `${p}:article-url:${u}`,
    event: (id) => `${p}:event:${id}`,
    eventLinks: (id) => `${p}:event-links:${id}`,
    mergedInto: (id) => `${p}:merged-into:${id}`,
    splitOff: (id) => `${p}:split-off:${id}`,
    outbox: (id) => `${p}:outbox:${id}`,
    intake: `${p}:intake`,
    analysed: `${p}:analysed`,
    deadLetters: `${p}:dead-letters`,
    answered: `${p}:answered`,
    linkerLease: `${p}:linker-lease`,
    pollLease: `${p}:poll-lease`,
    linkerPosition: `${p}:linker-position`,
    pattern: `${p}:*`,
  };
}
