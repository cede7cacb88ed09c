// The desk page: a router over the views, the header's counts, the key prompt and the live
// stream. The views live in js/, one module each; all read the public API.
import { api, hasKey, onKeyNeeded, setKey } from './js/api.js';
import { $, el, problem } from './js/dom.js';
import { followStream, touched } from './js/live.js';
import { createDesk } from './js/desk.js';
import { renderStory } from './js/story-view.js';
import { renderEvent } from './js/event-view.js';
import { renderArticle } from './js/article-view.js';
import { renderFeeds } from './js/feeds-view.js';
import { renderAlerts } from './js/alerts-view.js';
import { renderCorrections } from './js/corrections.js';
import { renderReviews } from './js/review-view.js';

const LIVE_WORDS = {
  live: 'live: updates as news arrives',
  reconnecting: 'live stream interrupted: reconnecting…',
  polling: 'refreshing every 5 s',
};
const live = followStream((state) => {
  $('live').textContent = LIVE_WORDS[state] ?? '';
  $('live').dataset.state = state;
});
const current = { kind: null, id: null };
const desk = createDesk({ live, selected: () => current.id });
const detail = el(
  'section',
  { id: 'detail', class: 'detail', 'aria-label': 'Details' },
  el('p', { class: 'hint' }, 'Choose a story or an event to see who reported it and when, and why each sentence was linked.'),
);
const deskLayout = el('div', { class: 'layout' }, desk.node, detail);
let deskLoaded = false;

let routed = [];
const ctx = {
  changed: () => void desk.poll().catch(() => {}),
  /** Goes to a view and resolves once it is drawn (the same view is drawn again). */
  navigate: (hash) =>
    new Promise((resolve) => {
      routed.push(resolve);
      if (location.hash === hash) void route();
      else location.hash = hash;
    }),
};

const DETAIL = { stories: renderStory, events: renderEvent, articles: renderArticle };
const FULL = { feeds: renderFeeds, alerts: renderAlerts, corrections: renderCorrections, reviews: renderReviews };

async function route(focus = true) {
  const [, kind, id] = location.hash.match(/^#\/(stories|events|articles)\/(.+)$/) ?? [];
  const full = location.hash.match(/^#\/(feeds|alerts|corrections|reviews)(?:\/rv_[0-9a-f]{12})?$/)?.[1];
  const tab = full ?? 'desk';
  for (const a of document.querySelectorAll('.tabs a')) {
    if (a.dataset.tab === tab) a.setAttribute('aria-current', 'page');
    else a.removeAttribute('aria-current');
  }
  const view = $('view');
  try {
    if (full) {
      current.kind = full;
      current.id = null;
      await FULL[full](view);
    } else {
      if (!view.contains(deskLayout)) view.replaceChildren(deskLayout);
      if (!deskLoaded) {
        // The list first; the outlet choices fill in after it.
        await desk.load();
        deskLoaded = true;
        void desk.loadOutlets().catch(() => {});
      }
      current.kind = kind ?? null;
      current.id = id ? decodeURIComponent(id) : null;
      desk.mark(current.id);
      if (kind) await DETAIL[kind](detail, current.id, ctx);
    }
    if (focus) $('view-title')?.focus();
  } catch (err) {
    if (full) view.replaceChildren(problem(`Could not load: ${err.message}`));
    else if (deskLoaded) detail.replaceChildren(problem(`Could not load: ${err.message}`));
    else $('count').textContent = `Could not load: ${err.message}`;
  } finally {
    for (const resolve of routed.splice(0)) resolve();
  }
}

// A story or event on screen that changes is not redrawn under the reader: a cue offers it.
live.listen((type, data) => {
  if (current.kind !== 'stories' && current.kind !== 'events') return;
  const t = touched(data);
  if (!(current.kind === 'stories' ? t.stories : t.events).has(current.id) || detail.querySelector('.detail-fresh')) return;
  detail.prepend(
    el(
      'button',
      { type: 'button', class: 'fresh detail-fresh', onclick: () => void route() },
      `This ${current.kind === 'stories' ? 'story' : 'event'} has changed since it was shown: show the latest`,
    ),
  );
});

async function refreshStatus() {
  try {
    const h = await api('/api/health');
    const i = h.ingest;
    const progress =
      i.state === 'replaying' ? ` · replaying ${i.processed}/${i.total} articles` : i.state === 'finished' ? ' · replay finished' : '';
    $('status').textContent = `${h.counts.articles} articles · ${h.counts.stories ?? 0} stories · ${h.counts.events} events${progress}`;
  } catch {
    $('status').textContent = 'server not answering';
  }
}

// The header's counts follow the stream too, at most once a second.
let countsDue = null;
live.listen(() => {
  countsDue ??= setTimeout(() => {
    countsDue = null;
    void refreshStatus();
  }, 1000);
});

onKeyNeeded((status) => {
  $('token-form').hidden = false;
  $('token-form').querySelector('label').textContent =
    status === 403
      ? 'Your API key may not do this (its scopes are too small); enter another:'
      : 'This server needs an API key for what you asked:';
});
$('token-form').addEventListener('submit', (e) => {
  e.preventDefault();
  setKey($('token').value.trim());
  $('token').value = '';
  $('token-form').hidden = true;
  deskLoaded = false;
  void start();
});
window.addEventListener('hashchange', () => void route());

async function start() {
  await Promise.all([route(false), refreshStatus()]);
  live.start();
}

await start();
setInterval(() => {
  void refreshStatus();
  if (!live.live() || hasKey()) void desk.poll().catch(() => {});
}, 5000);
