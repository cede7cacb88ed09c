/** The notification types subscribers can ask for (shared by the configuration and the outbox). */
export const NOTIFICATION_TYPES = [
  'event.opened',
  'event.outlet_added',
  'event.merged',
  'event.split',
  'event.cross_story_link',
  'event.corrected',
  'story.opened',
  'story.outlet_added',
  'story.merged',
  'story.split',
  'story.corrected',
  'article.linked',
] as const;

/** One notification type. */
export type NotificationType = (typeof NOTIFICATION_TYPES)[number];
