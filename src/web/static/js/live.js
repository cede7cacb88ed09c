// The live stream: one EventSource for the page, handing each notification to the views
// that listen. Each message's arrival is timed, so that a view can measure how long its
// update took to reach the screen (performance entries named "live-update").
import { hasKey } from './api.js';

export const LIVE_TYPES = [
  'event.opened',
  'event.outlet_added',
  'event.merged',
  'event.split',
  'event.corrected',
  'event.cross_story_link',
  'article.linked',
  'story.opened',
  'story.outlet_added',
  'story.merged',
  'story.split',
  'story.corrected',
];

/** Follows the stream while the page is open; listeners get (type, data, receivedAt). */
export function followStream(onState) {
  const listeners = new Set();
  let source = null;
  const start = () => {
    // EventSource cannot send a key: where reads need one, the views refresh by polling instead.
    if (typeof EventSource === 'undefined' || hasKey()) {
      source?.close();
      source = null;
      onState('polling');
      return;
    }
    if (source && source.readyState !== EventSource.CLOSED) return;
    source = new EventSource(`/api/stream?types=${LIVE_TYPES.join(',')}`);
    source.addEventListener('open', () => onState('live'));
    source.addEventListener('error', () => onState(source.readyState === EventSource.CLOSED ? 'polling' : 'reconnecting'));
    const hand = (message) => {
      const receivedAt = performance.now();
      let data;
      try {
        data = JSON.parse(message.data).data ?? {};
      } catch {
        return;
      }
      for (const fn of listeners) fn(message.type, data, receivedAt);
    };
    for (const type of LIVE_TYPES) source.addEventListener(type, hand);
  };
  return {
    start,
    live: () => source !== null && source.readyState !== EventSource.CLOSED,
    listen(fn) {
      listeners.add(fn);
      return () => listeners.delete(fn);
    },
  };
}

/** The ids of events and stories a notification touches (told apart by their prefix). */
export function touched(data) {
  const ids = [data.mergedFrom, ...(data.removed ?? [])];
  for (const x of [data.event, data.otherEvent, data.splitOff, data.story, ...(data.events ?? [])]) if (x) ids.push(x.id, x.story);
  const events = new Set();
  const stories = new Set();
  for (const id of ids) {
    if (typeof id !== 'string') continue;
    if (id.startsWith('ev_')) events.add(id);
    else if (id.startsWith('st_')) stories.add(id);
  }
  return { events, stories, removed: new Set([data.mergedFrom, ...(data.removed ?? [])].filter(Boolean)) };
}

/** Records, once the browser has painted, how long an update took from its message. */
export function markPainted(receivedAt) {
  requestAnimationFrame(() =>
    setTimeout(() => {
      performance.measure('live-update', { start: receivedAt, end: performance.now() });
    }, 0),
  );
}
