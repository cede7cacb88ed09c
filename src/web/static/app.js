// The analysts' page: lists events, shows one event's mentions by outlet with score and
// evidence, and an article's sentences with their links. Every piece of fetched text is
// inserted with textContent, never as HTML: feed text is untrusted.

const PAGE = 50;
const state = { offset: 0, total: 0, selected: null, refreshTimer: null, ingestState: 'idle', fresh: new Set() };
const $ = (id) => document.getElementById(id);

/** Only http(s) links are shown as links (stored URLs come from feeds and pushes). */
function safeUrl(url) {
  return typeof url === 'string' && /^https?:\/\//i.test(url);
}

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === 'class') node.className = v;
    else if (k === 'onclick') node.addEventListener('click', v);
    else node.setAttribute(k, v);
  }
  return fill(node, ...children);
}

/** Appends children, flattening nested arrays and skipping null and undefined. */
function fill(node, ...children) {
  for (const c of children.flat(Infinity)) if (c !== null && c !== undefined && c !== false) node.append(c instanceof Node ? c : String(c));
  return node;
}

/** Replaces a node's children the same way. */
function replace(node, ...children) {
  node.replaceChildren();
  return fill(node, ...children);
}

const TOKEN_KEY = 'strandline-token';

async function api(path) {
  // A server with server.protect "everything" wants a token for reads too; it lives in this tab's session storage.
  const token = sessionStorage.getItem(TOKEN_KEY);
  const res = await fetch(path, { headers: { accept: 'application/json', ...(token ? { authorization: `Bearer ${token}` } : {}) } });
  const body = await res.json();
  if (res.status === 401) $('token-form').hidden = false;
  if (!res.ok) throw new Error(body?.error?.message ?? `HTTP ${res.status}`);
  return body;
}

const fmtDay = (iso) => (iso ? iso.slice(0, 10) : 'undated');
const pct = (x) => `${Math.round(x * 100)}%`;

function scoreBar(score) {
  const bar = el('span', { class: 'score', title: `score ${score.toFixed(2)}` }, el('span'));
  bar.firstChild.style.width = pct(Math.max(0, Math.min(1, score)));
  return bar;
}

function evidenceLine(ev) {
  if (ev.opened) return 'opened this event (first sentence seen reporting it)';
  const parts = [`similarity ${ev.similarity.toFixed(2)}`, `time gap ${ev.timeGapDays} d (×${ev.timeDecay.toFixed(2)})`];
  const shared = [...ev.sharedParticipants, ...ev.sharedPlaces];
  if (shared.length) parts.push(`shared: ${shared.join(', ')} (+${ev.overlapBonus.toFixed(2)})`);
  return parts.join(' · ');
}

function query() {
  const p = new URLSearchParams({ limit: String(PAGE), offset: String(state.offset), sort: $('sort').value });
  for (const id of ['q', 'outlet', 'from', 'to']) if ($(id).value) p.set(id, $(id).value);
  return p;
}

async function loadEvents(append = false) {
  if (!append) {
    state.offset = 0;
    // The list about to be read holds what changed so far.
    state.fresh.clear();
    showFresh();
  }
  const page = await api(`/api/events?${query()}`);
  state.total = page.total;
  const list = $('events');
  if (!append) list.replaceChildren();
  for (const e of page.events) {
    const li = el(
      'li',
      { 'data-id': e.id, tabindex: '0', onclick: () => go(`#/events/${encodeURIComponent(e.id)}`) },
      el('span', { class: 'label' }, e.label),
      el(
        'span',
        { class: 'meta' },
        `${e.timeStart === e.timeEnd ? e.timeStart : `${e.timeStart} – ${e.timeEnd}`} · ${e.outlets.length} outlet${e.outlets.length === 1 ? '' : 's'}` +
          `${e.independentOutlets < e.outlets.length ? ` (${e.independentOutlets} independent)` : ''} · ${e.mentionCount} mention${e.mentionCount === 1 ? '' : 's'}`,
      ),
    );
    li.addEventListener('keydown', (k) => {
      if (k.key === 'Enter') li.click();
    });
    if (e.id === state.selected) li.classList.add('active');
    list.append(li);
  }
  state.offset += page.events.length;
  $('count').textContent = `${page.total} event${page.total === 1 ? '' : 's'}`;
  $('more').hidden = state.offset >= page.total;
}

async function showEvent(id) {
  state.selected = id;
  for (const li of document.querySelectorAll('#events li')) li.classList.toggle('active', li.dataset.id === id);
  const d = await api(`/api/events/${encodeURIComponent(id)}`);
  const e = d.event;
  const max = Math.max(1, ...d.timeline.map((t) => t.mentions));
  const timeline = el(
    'div',
    { class: 'timeline', 'aria-label': 'Mentions per day' },
    d.timeline.map((t) => {
      const bar = el('div', {
        title: `${t.day}: ${t.mentions} mention(s)${t.newOutlets.length ? `; first report by ${t.newOutlets.join(', ')}` : ''}`,
      });
      bar.style.height = `${(t.mentions / max) * 100}%`;
      return bar;
    }),
  );
  replace(
    $('detail'),
    el('h2', {}, e.label),
    el(
      'p',
      { class: 'meta' },
      `Event ${e.id} · happened ${e.timeStart}${e.timeEnd !== e.timeStart ? ` – ${e.timeEnd}` : ''} · first seen ${fmtDay(e.firstSeen)}, last seen ${fmtDay(e.lastSeen)} · ${e.outlets.length} outlets (${e.independentOutlets} independent) · ${e.mentionCount} mentions`,
    ),
    e.participants.length
      ? el(
          'ul',
          { class: 'chips', 'aria-label': 'Participants' },
          e.participants.map((p) => el('li', {}, p)),
        )
      : null,
    e.places.length
      ? el(
          'ul',
          { class: 'chips', 'aria-label': 'Places' },
          e.places.map((p) => el('li', {}, `📍 ${p}`)),
        )
      : null,
    d.merges.length
      ? el('p', { class: 'meta' }, `Consolidation merged ${d.merges.length} other event(s) into this one (a machine suggestion too).`)
      : null,
    ...d.splits.map((s) => {
      const other = s.from === e.id ? s.into : s.from;
      const what =
        s.from === e.id
          ? `Consolidation moved ${s.mentions} mention(s) of this event to another that reads as a different happening`
          : `Consolidation split this event off another, moving ${s.mentions} mention(s) here`;
      return el(
        'p',
        { class: 'meta' },
        `${what} (the parts were alike ${s.score.toFixed(2)}; a machine suggestion too): `,
        el('a', { href: `#/events/${encodeURIComponent(other)}` }, other),
      );
    }),
    timeline,
    el(
      'p',
      { class: 'meta' },
      `Mentions per day, ${d.timeline[0]?.day ?? ''} to ${d.timeline.at(-1)?.day ?? ''} (hover a bar for the day and its first-time outlets)`,
    ),
    d.byOutlet.map((g) =>
      el(
        'section',
        { class: 'outlet' },
        el(
          'h3',
          {},
          g.outlet,
          g.independent ? null : el('span', { class: 'copy' }, ' · copy of another outlet’s article (not independent confirmation)'),
        ),
        g.mentions.map((m) =>
          el(
            'div',
            { class: 'mention' },
            el('div', {}, m.text ?? '(text erased under the retention policy)'),
            el(
              'div',
              { class: 'evidence' },
              scoreBar(m.score),
              `score ${m.score.toFixed(2)}${m.rank > 0 ? ' (further event of this sentence)' : ''} · ${evidenceLine(m.evidence)}`,
            ),
            el(
              'div',
              { class: 'meta' },
              `${fmtDay(m.published)} · `,
              el('a', { href: `#/articles/${encodeURIComponent(m.articleId)}` }, m.articleTitle || m.articleId),
              safeUrl(m.articleUrl)
                ? [' · ', el('a', { href: m.articleUrl, rel: 'noopener noreferrer', target: '_blank' }, 'source')]
                : null,
            ),
          ),
        ),
      ),
    ),
  );
}

async function showArticle(id) {
  const d = await api(`/api/articles/${encodeURIComponent(id)}`);
  const a = d.article;
  replace(
    $('detail'),
    el('h2', {}, a.title || a.id),
    el(
      'p',
      { class: 'meta' },
      `${a.outlet} · ${fmtDay(a.published)}`,
      a.duplicateOf
        ? a.copySimilarity === null || a.copySimilarity >= 1
          ? ' · verbatim copy of '
          : ` · edited copy (similarity ${a.copySimilarity.toFixed(2)}) of `
        : null,
      a.duplicateOf ? el('a', { href: `#/articles/${encodeURIComponent(a.duplicateOf)}` }, a.duplicateOf) : null,
      safeUrl(a.url) ? [' · ', el('a', { href: a.url, rel: 'noopener noreferrer', target: '_blank' }, 'source')] : null,
    ),
    d.sentences.map((s) =>
      el(
        'div',
        { class: `sentence${s.isMention ? ' is-mention' : ''}` },
        el('div', {}, s.text || '(text erased under the retention policy)'),
        el('div', { class: 'meta' }, `sentence ${s.index} · event-ness ${s.eventness.toFixed(2)}`),
        s.links.map((l) =>
          el(
            'div',
            { class: 'evidence' },
            scoreBar(l.score),
            `→ `,
            el('a', { href: `#/events/${encodeURIComponent(l.eventId)}` }, l.eventLabel),
            ` · score ${l.score.toFixed(2)} · ${evidenceLine(l.evidence)}`,
          ),
        ),
      ),
    ),
  );
}

function go(hash) {
  if (location.hash === hash) route();
  else location.hash = hash;
}

async function route() {
  const [, kind, id] = location.hash.match(/^#\/(events|articles)\/(.+)$/) ?? [];
  try {
    if (kind === 'events') await showEvent(decodeURIComponent(id));
    else if (kind === 'articles') await showArticle(decodeURIComponent(id));
  } catch (err) {
    replace($('detail'), el('p', { class: 'hint' }, `Could not load: ${err.message}`));
  }
}

async function refreshStatus() {
  try {
    const h = await api('/api/health');
    const i = h.ingest;
    const progress =
      i.state === 'replaying' ? ` · replaying ${i.processed}/${i.total} articles` : i.state === 'finished' ? ' · replay finished' : '';
    $('status').textContent = `${h.counts.articles} articles · ${h.counts.mentions} event sentences · ${h.counts.events} events${progress}`;
    if (i.state === 'replaying' || state.ingestState === 'replaying') await loadEvents();
    state.ingestState = i.state;
  } catch {
    $('status').textContent = 'server not answering';
  }
}

async function loadOutlets() {
  const { outlets } = await api('/api/outlets');
  const current = $('outlet').value;
  replace(
    $('outlet'),
    el('option', { value: '' }, 'All outlets'),
    outlets.map((o) => el('option', { value: o.outlet }, `${o.outlet} (${o.articles})`)),
  );
  $('outlet').value = current;
}

let typing = null;
$('filters').addEventListener('input', () => {
  clearTimeout(typing);
  typing = setTimeout(() => void loadEvents(), 250);
});
$('filters').addEventListener('submit', (e) => e.preventDefault());
$('more').addEventListener('click', () => void loadEvents(true));
window.addEventListener('hashchange', () => void route());

// The live stream: events opened or changed since the list was read are counted in a cue
// the reader chooses to follow, rather than moved into the list under their eyes.
const LIVE_TYPES = ['event.opened', 'event.outlet_added', 'event.merged', 'event.split', 'event.corrected', 'article.linked'];

function showFresh() {
  const n = state.fresh.size;
  $('fresh').hidden = n === 0;
  $('fresh').textContent = `${n} event${n === 1 ? '' : 's'} new or changed since this list was read: show them`;
}

function followStream() {
  // EventSource cannot send a key: where reads need one, the status poll keeps the counts current.
  if (typeof EventSource === 'undefined' || sessionStorage.getItem(TOKEN_KEY) || state.stream) return;
  const source = new EventSource(`/api/stream?types=${LIVE_TYPES.join(',')}`);
  state.stream = source;
  const note = (message) => {
    let data;
    try {
      data = JSON.parse(message.data).data ?? {};
    } catch {
      return;
    }
    for (const id of [data.event?.id, data.otherEvent?.id, ...(data.events ?? []).map((e) => e.id)]) if (id) state.fresh.add(id);
    showFresh();
  };
  for (const type of LIVE_TYPES) source.addEventListener(type, note);
}

$('fresh').addEventListener('click', () => void loadEvents());

async function loadAll() {
  const results = await Promise.allSettled([loadOutlets(), loadEvents(), refreshStatus()]);
  const failed = results.find((r) => r.status === 'rejected');
  if (failed) replace($('count'), `Could not load events: ${failed.reason.message}`);
  else {
    await route();
    followStream();
  }
}

$('token-form').addEventListener('submit', (e) => {
  e.preventDefault();
  sessionStorage.setItem(TOKEN_KEY, $('token').value.trim());
  $('token').value = '';
  $('token-form').hidden = true;
  void loadAll();
});

await loadAll();
setInterval(() => {
  void refreshStatus();
  void loadOutlets();
}, 3000);
