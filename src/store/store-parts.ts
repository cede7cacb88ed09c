/**
 * What a backend's store hands to its parts: every Store method outside the commits (the
 * API's queries, the outbox's deliveries, the subscriptions, the API keys, the corrections, the feed list, retention), passed on to the part
 * that owns it. Both backends extend it, so the hand-over is written once.
 */
import type {
  ApiKey,
  ApiKeys,
  ArticleDetail,
  CorrectionCommit,
  CorrectionRecord,
  Corrections,
  Delivery,
  EventDetail,
  EventPage,
  EventQueries,
  EventQuery,
  FeedEntry,
  FeedRegistry,
  MergeRecord,
  NotificationLog,
  Outbox,
  Retention,
  SplitRecord,
  StoreCounts,
  StoryDetail,
  StoryPage,
  StoryQuery,
  StoryUnmergeCommit,
  StoryUnsplitCommit,
  Subscription,
  Subscriptions,
  ReviewAnswer,
  ReviewRound,
  Reviews,
} from './store.js';

/** The parts a store is made of besides its commits. */
export abstract class StoreParts implements EventQueries, Outbox, Subscriptions, ApiKeys, Reviews, Corrections, FeedRegistry, Retention {
  protected abstract readonly corrections: Corrections;
  protected abstract readonly apiKeys: ApiKeys;
  protected abstract readonly reviews: Reviews;
  protected abstract readonly queries: EventQueries;
  protected abstract readonly outbox: Outbox;
  protected abstract readonly subscriptions: Subscriptions;
  protected abstract readonly feeds: FeedRegistry;
  protected abstract readonly retention: Retention;

  listEvents(q: EventQuery): Promise<EventPage> {
    return this.queries.listEvents(q);
  }
  getEvent(id: string): Promise<EventDetail | null> {
    return this.queries.getEvent(id);
  }
  splitsOf(eventId: string): Promise<SplitRecord[]> {
    return this.queries.splitsOf(eventId);
  }
  mergedInto(id: string): Promise<string | null> {
    return this.queries.mergedInto(id);
  }
  mergesInto(id: string): Promise<MergeRecord[]> {
    return this.queries.mergesInto(id);
  }
  listStories(q: StoryQuery): Promise<StoryPage> {
    return this.queries.listStories(q);
  }
  getStory(id: string): Promise<StoryDetail | null> {
    return this.queries.getStory(id);
  }
  storyMergedInto(id: string): Promise<string | null> {
    return this.queries.storyMergedInto(id);
  }
  getArticle(id: string): Promise<ArticleDetail | null> {
    return this.queries.getArticle(id);
  }
  listOutlets(): Promise<{ outlet: string; articles: number }[]> {
    return this.queries.listOutlets();
  }
  counts(): Promise<StoreCounts> {
    return this.queries.counts();
  }
  dueDeliveries(now: string, limit: number, skip: readonly string[] = []): Promise<Delivery[]> {
    return this.outbox.dueDeliveries(now, limit, skip);
  }
  recordAttempt(...a: Parameters<Outbox['recordAttempt']>): Promise<void> {
    return this.outbox.recordAttempt(...a);
  }
  deadLetters(limit: number): Promise<Delivery[]> {
    return this.outbox.deadLetters(limit);
  }
  notificationsAfter(after: number, limit: number): Promise<NotificationLog> {
    return this.outbox.notificationsAfter(after, limit);
  }
  pruneNotifications(before: string): Promise<number> {
    return this.outbox.pruneNotifications(before);
  }
  listSubscriptions(): Promise<(Subscription & { cursor: number })[]> {
    return this.subscriptions.listSubscriptions();
  }
  addSubscription(s: Subscription, cursor: number): Promise<boolean> {
    return this.subscriptions.addSubscription(s, cursor);
  }
  putSubscription(s: Subscription, cursor: number): Promise<void> {
    return this.subscriptions.putSubscription(s, cursor);
  }
  updateSubscription(name: string, change: (s: Subscription) => Subscription): Promise<Subscription | null> {
    return this.subscriptions.updateSubscription(name, change);
  }
  deleteSubscription(name: string): Promise<boolean> {
    return this.subscriptions.deleteSubscription(name);
  }
  fanOut(...a: Parameters<Subscriptions['fanOut']>): Promise<boolean> {
    return this.subscriptions.fanOut(...a);
  }
  subscriptionDeliveries(name: string, limit: number, status?: Delivery['status']): Promise<Delivery[]> {
    return this.subscriptions.subscriptionDeliveries(name, limit, status);
  }
  replayDeadLetters(name: string, now: string): Promise<number> {
    return this.subscriptions.replayDeadLetters(name, now);
  }
  listApiKeys(): Promise<ApiKey[]> {
    return this.apiKeys.listApiKeys();
  }
  addApiKey(k: ApiKey): Promise<void> {
    return this.apiKeys.addApiKey(k);
  }
  deleteApiKey(id: string): Promise<boolean> {
    return this.apiKeys.deleteApiKey(id);
  }
  addReviewRound(r: ReviewRound): Promise<void> {
    return this.reviews.addReviewRound(r);
  }
  listReviewRounds(): Promise<Omit<ReviewRound, 'items'>[]> {
    return this.reviews.listReviewRounds();
  }
  getReviewRound(id: string): Promise<ReviewRound | null> {
    return this.reviews.getReviewRound(id);
  }
  putReviewAnswer(a: ReviewAnswer): Promise<void> {
    return this.reviews.putReviewAnswer(a);
  }
  reviewAnswers(round: string): Promise<ReviewAnswer[]> {
    return this.reviews.reviewAnswers(round);
  }
  commitCorrection(c: CorrectionCommit): Promise<void> {
    return this.corrections.commitCorrection(c);
  }
  listCorrections(limit: number, offset: number): Promise<{ total: number; corrections: CorrectionRecord[] }> {
    return this.corrections.listCorrections(limit, offset);
  }
  getCorrection(id: string): Promise<CorrectionRecord | null> {
    return this.corrections.getCorrection(id);
  }
  commitStoryUnmerge(u: StoryUnmergeCommit): Promise<void> {
    return this.corrections.commitStoryUnmerge(u);
  }
  commitStoryUnsplit(u: StoryUnsplitCommit): Promise<void> {
    return this.corrections.commitStoryUnsplit(u);
  }
  listFeeds(): Promise<FeedEntry[]> {
    return this.feeds.listFeeds();
  }
  putFeed(f: FeedEntry): Promise<void> {
    return this.feeds.putFeed(f);
  }
  updateFeed(id: string, change: (f: FeedEntry) => FeedEntry): Promise<FeedEntry | null> {
    return this.feeds.updateFeed(id, change);
  }
  deleteFeed(id: string): Promise<boolean> {
    return this.feeds.deleteFeed(id);
  }
  eraseTextBefore(day: string): Promise<number> {
    return this.retention.eraseTextBefore(day);
  }
  eraseArticleText(id: string): Promise<boolean> {
    return this.retention.eraseArticleText(id);
  }
  compact(): Promise<void> {
    return this.retention.compact();
  }
}
