// The desk: stories or events, newest activity first, with filters. While it is open it
// follows the live stream: rows already shown are updated in place, and what is new (or has
// risen to the top) is counted in a cue the reader chooses to follow, so the list never
// moves under their eyes.
import { api, query } from './api.js';
import { markPainted, touched } from './live.js';
import { $, el, fmtSpan, isFigure, plural, replace } from './dom.js';

const PAGE = 50;
const SORTS = {
  stories: [
    ['recent', 'Most recent activity'],
    ['outlets', 'Most outlets'],
    ['articles', 'Most articles'],
  ],
  events: [
    ['recent', 'Most recent activity'],
    ['outlets', 'Most outlets'],
    ['mentions', 'Most mentions'],
  ],
};

function storyMeta(s) {
  const copies = s.independentOutlets < s.outlets.length ? ` (${s.independentOutlets} independent)` : '';
  return `${fmtSpan(s.firstSeen, s.lastSeen)} · ${plural(s.articleCount, 'article')} · ${plural(s.outlets.length, 'outlet')}${copies} · ${plural(s.eventCount, 'event')}`;
}

function eventMeta(e) {
  const copies = e.independentOutlets < e.outlets.length ? ` (${e.independentOutlets} independent)` : '';
  return `reported ${fmtSpan(e.firstSeen, e.lastSeen)} · ${plural(e.outlets.length, 'outlet')}${copies} · ${plural(e.mentionCount, 'mention')}`;
}

/** The desk's list column. `selected()` names the open story or event, to mark its row. */
export function createDesk({ live, selected }) {
  const state = { mode: 'stories', offset: 0, total: 0, rows: new Map(), fresh: new Set(), busy: false, again: [], rendered: false };
  const mode = () => state.mode;
  const list = el('ol', { id: 'desk-list', class: 'rows', 'aria-label': 'Stories' });
  const count = el('p', { id: 'count', class: 'count', role: 'status' });
  const fresh = el('button', { id: 'fresh', type: 'button', class: 'fresh', hidden: true, onclick: () => void load() });
  const more = el('button', { id: 'more', type: 'button', hidden: true, onclick: () => void load(true) }, 'Show more');
  const sort = el('select', { id: 'sort' });
  const outlet = el('select', { id: 'outlet' }, el('option', { value: '' }, 'All outlets'));
  const field = (id, label, attrs = {}) =>
    el('label', { class: 'field', for: id }, el('span', {}, label), el('input', { id, name: id, maxlength: 200, ...attrs }));
  const modeSwitch = el(
    'fieldset',
    { class: 'mode' },
    el('legend', { class: 'sr-only' }, 'Show'),
    ['stories', 'events'].map((m) =>
      el(
        'label',
        {},
        el('input', { type: 'radio', name: 'mode', value: m, checked: m === state.mode, id: `mode-${m}` }),
        m === 'stories' ? ' Stories' : ' Events',
      ),
    ),
  );
  const form = el(
    'form',
    { id: 'filters', class: 'filters', role: 'search', 'aria-label': 'Filter the desk' },
    modeSwitch,
    field('q', 'Words', { type: 'search' }),
    field('participant', 'Participant', { type: 'search' }),
    field('place', 'Place', { type: 'search' }),
    el('label', { class: 'field', for: 'outlet' }, el('span', {}, 'Outlet'), outlet),
    field('from', 'From', { type: 'date' }),
    field('to', 'To', { type: 'date' }),
    el('label', { class: 'field', for: 'sort' }, el('span', {}, 'Order'), sort),
  );
  const node = el('section', { class: 'desk', 'aria-label': 'Desk' }, form, count, fresh, list, more);

  function fillSorts() {
    const was = sort.value;
    replace(
      sort,
      SORTS[state.mode].map(([v, t]) => el('option', { value: v }, t)),
    );
    sort.value = SORTS[state.mode].some(([v]) => v === was) ? was : 'recent';
  }
  fillSorts();

  const filters = () => ({
    q: $('q').value,
    participant: $('participant').value,
    place: $('place').value,
    outlet: outlet.value,
    from: $('from').value,
    to: $('to').value,
    sort: sort.value,
  });
  const path = (limit, offset) => `/api/${state.mode}?${query({ ...filters(), limit, offset })}`;

  function rowContent(item) {
    const isStory = state.mode === 'stories';
    return el(
      'a',
      { href: `#/${state.mode}/${encodeURIComponent(item.id)}`, class: 'row-link' },
      el('span', { class: 'label' }, item.label),
      el('span', { class: 'meta' }, isStory ? storyMeta(item) : eventMeta(item)),
      isStory && item.names.length
        ? el(
            'span',
            { class: 'meta names-line' },
            item.names
              .filter((n) => !isFigure(n))
              .slice(0, 5)
              .join(' · '),
          )
        : null,
    );
  }

  function row(item) {
    const li = el('li', { 'data-id': item.id, 'data-version': item.version }, rowContent(item));
    if (item.id === selected()) li.classList.add('active');
    return li;
  }

  function showFresh() {
    const n = state.fresh.size;
    fresh.hidden = n === 0;
    const noun = state.mode === 'stories' ? 'story' : 'event';
    fresh.textContent = `${n} ${n === 1 ? noun : `${noun === 'story' ? 'stories' : 'events'}`} new or with new activity: show them`;
  }

  function showCount() {
    count.textContent = `${plural(state.total, state.mode === 'stories' ? 'story' : 'event', state.mode)}`;
  }

  async function load(append = false) {
    if (!append) {
      state.offset = 0;
      state.fresh.clear();
      showFresh();
    }
    const page = await api(path(PAGE, state.offset));
    const items = page[state.mode];
    state.total = page.total;
    if (!append) {
      list.replaceChildren();
      state.rows.clear();
      list.setAttribute('aria-label', state.mode === 'stories' ? 'Stories' : 'Events');
    }
    for (const item of items) {
      const li = row(item);
      state.rows.set(item.id, li);
      list.append(li);
    }
    state.offset += items.length;
    showCount();
    more.hidden = state.offset >= page.total;
    if (!state.rendered) {
      state.rendered = true;
      requestAnimationFrame(() => setTimeout(() => performance.mark('desk-rendered'), 0));
    }
  }

  /** Reads the top of the list again: shown rows change in place, the rest is counted as new. */
  async function refresh(receivedAts) {
    state.again.push(...receivedAts);
    if (state.busy) return;
    state.busy = true;
    try {
      while (state.again.length || receivedAts) {
        const times = state.again.splice(0);
        receivedAts = null;
        const page = await api(path(Math.min(200, Math.max(PAGE, state.rows.size)), 0));
        for (const item of page[state.mode]) {
          const li = state.rows.get(item.id);
          if (!li) state.fresh.add(item.id);
          else if (li.dataset.version !== String(item.version)) {
            li.dataset.version = String(item.version);
            li.replaceChildren(rowContent(item));
            li.classList.remove('updated');
            void li.offsetWidth;
            li.classList.add('updated');
          }
        }
        state.total = page.total;
        showCount();
        showFresh();
        for (const t of times) markPainted(t);
      }
    } finally {
      state.busy = false;
    }
  }

  live.listen((type, data, receivedAt) => {
    const t = touched(data);
    for (const id of t.removed) {
      const li = state.rows.get(id);
      if (li && !li.classList.contains('gone')) {
        li.classList.add('gone');
        li.append(el('span', { class: 'meta' }, 'merged into another (show the new list to see where)'));
      }
    }
    // A failed read leaves the rows as they are; the next message or poll tries again.
    refresh([receivedAt]).catch(() => undefined);
  });

  let typing = null;
  form.addEventListener('input', (e) => {
    if (e.target.name === 'mode') {
      state.mode = e.target.value;
      fillSorts();
    }
    clearTimeout(typing);
    typing = setTimeout(
      () => void load().catch((err) => (count.textContent = `Could not load: ${err.message}`)),
      e.target.name === 'mode' ? 0 : 250,
    );
  });
  form.addEventListener('submit', (e) => e.preventDefault());

  async function loadOutlets() {
    const { outlets } = await api('/api/outlets');
    const current = outlet.value;
    replace(
      outlet,
      el('option', { value: '' }, 'All outlets'),
      outlets.map((o) => el('option', { value: o.outlet }, `${o.outlet} (${o.articles})`)),
    );
    outlet.value = current;
  }

  return {
    node,
    mode,
    load,
    loadOutlets,
    /** Used when the stream cannot be followed: read the top again. */
    poll: () => refresh([]),
    /** Marks the open story or event's row. */
    mark(id) {
      for (const li of list.children) li.classList.toggle('active', li.dataset.id === id);
    },
  };
}
