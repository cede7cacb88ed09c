// Building blocks of the page: elements from plain values, formatting, inline SVG icons.
// Every piece of fetched text goes in as text, never as HTML: feed text is untrusted.

const SVG = 'http://www.w3.org/2000/svg';

export const $ = (id) => document.getElementById(id);

/** Appends children, flattening nested arrays and skipping null, undefined and false. */
export function fill(node, ...children) {
  for (const c of children.flat(Infinity)) if (c !== null && c !== undefined && c !== false) node.append(c instanceof Node ? c : String(c));
  return node;
}

function withAttrs(node, attrs) {
  for (const [k, v] of Object.entries(attrs)) {
    if (v === undefined || v === null || v === false) continue;
    if (k === 'class') node.setAttribute('class', v);
    else if (k.startsWith('on')) node.addEventListener(k.slice(2), v);
    else node.setAttribute(k, v === true ? '' : String(v));
  }
  return node;
}

/** An HTML element: el('a', { href, onclick }, 'text', child, [more]). */
export function el(tag, attrs = {}, ...children) {
  return fill(withAttrs(document.createElement(tag), attrs), ...children);
}

/** An SVG element, same form. */
export function svg(tag, attrs = {}, ...children) {
  return fill(withAttrs(document.createElementNS(SVG, tag), attrs), ...children);
}

/** Replaces a node's children. */
export function replace(node, ...children) {
  node.replaceChildren();
  return fill(node, ...children);
}

// 16×16 outline icons drawn for this page, one path each.
const ICONS = {
  place: 'M8 15s5-4.6 5-8.5A5 5 0 0 0 3 6.5C3 10.4 8 15 8 15zm0-6.5a2 2 0 1 1 0-4 2 2 0 0 1 0 4z',
  person: 'M8 8a3 3 0 1 0 0-6 3 3 0 0 0 0 6zm-5 7c0-3 2.2-5 5-5s5 2 5 5',
  figure: 'M3 13V9m3.3 4V5m3.4 8V7M13 13V3',
  copy: 'M5 5h8v9H5zM3 11V2h8',
  link: 'M7 9l2-2M6 5l1.5-1.5a2.5 2.5 0 0 1 3.5 3.5L9.5 8.5M10 11l-1.5 1.5a2.5 2.5 0 0 1-3.5-3.5L6.5 7.5',
  feed: 'M3 13a1 1 0 1 0 0 .01M3 8a5 5 0 0 1 5 5M3 3a10 10 0 0 1 10 10',
  bell: 'M4 11V7a4 4 0 0 1 8 0v4l1.5 1.5h-11zM6.5 14h3',
  log: 'M4 2h8v12H4zM6 5h4M6 8h4M6 11h2',
  desk: 'M2 3h12v10H2zM2 6h12M6 6v7',
  clock: 'M8 14A6 6 0 1 0 8 2a6 6 0 0 0 0 12zM8 5v3l2 2',
  ok: 'M3 8.5l3 3 7-7',
  fail: 'M4 4l8 8M12 4l-8 8',
  pause: 'M5.5 3v10M10.5 3v10',
  wait: 'M5 8h.01M8 8h.01M11 8h.01',
  undo: 'M5 3L2 6l3 3M2 6h7a4 4 0 0 1 0 8H6',
  merge: 'M3 2v3a4 4 0 0 0 4 4h2a4 4 0 0 1 4 4v1M13 2v3a4 4 0 0 1-4 4',
  split: 'M8 14V9M8 9L3 3M8 9l5-6',
};

/** An inline icon; decorative unless given a label. */
export function icon(name, label) {
  return svg(
    'svg',
    {
      class: `icon icon-${name}`,
      viewBox: '0 0 16 16',
      width: 16,
      height: 16,
      'aria-hidden': label ? null : 'true',
      role: label ? 'img' : null,
      'aria-label': label ?? null,
      focusable: 'false',
    },
    svg('path', {
      d: ICONS[name],
      fill: 'none',
      stroke: 'currentColor',
      'stroke-width': 1.5,
      'stroke-linecap': 'round',
      'stroke-linejoin': 'round',
    }),
  );
}

/** Only http(s) links are shown as links (stored URLs come from feeds and pushes). */
export const safeUrl = (url) => typeof url === 'string' && /^https?:\/\//i.test(url);

export const plural = (n, one, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;

const MONTHS = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];

/** "5 Oct 2026" from an ISO day or time (UTC day, as the server keeps them). */
export function fmtDay(iso) {
  if (!iso) return 'undated';
  const [y, m, d] = iso.slice(0, 10).split('-');
  return `${Number(d)} ${MONTHS[Number(m) - 1]} ${y}`;
}

/** "5 Oct 2026, 14:05 UTC". */
export function fmtTime(iso) {
  if (!iso) return 'never';
  return `${fmtDay(iso)}, ${iso.slice(11, 16)} UTC`;
}

/** A day range, shortened when both ends are the same day. */
export const fmtSpan = (a, b) => (a.slice(0, 10) === b.slice(0, 10) ? fmtDay(a) : `${fmtDay(a)} – ${fmtDay(b)}`);

export const pct = (x) => `${Math.round(x * 100)}%`;

/** A short bar for a score in [0, 1], with its value for screen readers. */
export function scoreBar(score, what = 'score') {
  const bar = el('span', { class: 'score', role: 'img', 'aria-label': `${what} ${score.toFixed(2)}` }, el('span'));
  bar.firstChild.style.width = pct(Math.max(0, Math.min(1, score)));
  return bar;
}

/** Participants that are counts ("five people") rather than names, shown apart as figures. */
export const isFigure = (name) => /^[0-9a-z]/.test(name);

/** Chips for names with an icon; nothing when empty. */
export function chips(label, names, iconName) {
  if (!names.length) return null;
  return el(
    'div',
    { class: 'names' },
    el('span', { class: 'names-label' }, icon(iconName), ` ${label}: `),
    el(
      'ul',
      { class: 'chips', 'aria-label': label },
      names.map((n) => el('li', {}, n)),
    ),
  );
}

/** A small notice for what went wrong, in words. */
export function problem(message) {
  return el('p', { class: 'problem', role: 'alert' }, icon('fail'), ` ${message}`);
}

/** A line that says what an action did, read out by screen readers when it changes. */
export const statusLine = () => el('div', { class: 'action-status', role: 'status', 'aria-live': 'polite' });

/** A full-width view: its heading (focused on arrival), a hint, then the rest. */
export function wideView(iconName, title, hint, ...children) {
  return el(
    'section',
    { class: 'view wide', 'aria-labelledby': 'view-title' },
    el('h2', { id: 'view-title', tabindex: '-1' }, icon(iconName), ` ${title}`),
    el('p', { class: 'hint' }, hint),
    ...children,
  );
}
