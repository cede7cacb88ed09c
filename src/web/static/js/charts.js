// Charts in plain SVG with axes and legends: a bar per day (empty days included) and an
// outlet-by-time lane chart. Each chart is an image with a text summary for screen readers;
// its marks are links where they lead somewhere.
import { el, fmtDay, svg } from './dom.js';

const DAY = 86_400_000;
const dayMs = (iso) => Date.parse(`${iso.slice(0, 10)}T00:00:00Z`);
const isoDay = (ms) => new Date(ms).toISOString().slice(0, 10);

/** Every day from the first to the last, inclusive. */
export function daysBetween(first, last) {
  const out = [];
  for (let t = dayMs(first); t <= dayMs(last); t += DAY) out.push(isoDay(t));
  return out;
}

/** A step that keeps labels readable: at most `max` of them. */
function tickStep(n, max) {
  for (const step of [1, 2, 3, 7, 14, 30, 61, 91, 182, 365]) if (n / step <= max) return step;
  return Math.ceil(n / max);
}

const shortDay = (iso) => fmtDay(iso).replace(/ \d{4}$/, '');

function legend(items, x, y) {
  let at = x;
  return svg(
    'g',
    { class: 'legend' },
    items.map(({ mark, text }) => {
      const g = svg('g', { transform: `translate(${at},${y})` }, mark, svg('text', { x: 12, y: 4 }, text));
      at += 24 + text.length * 6.2;
      return g;
    }),
  );
}

/**
 * Bars per day from `first` to `last` (days without any shown as empty), a y axis of counts,
 * date labels under the x axis, and a flag over days with a note (first reports).
 * rows: [{ day, value, note? }].
 */
export function dayChart({ rows, first, last, what, noteWhat, title }) {
  const byDay = new Map(rows.map((r) => [r.day, r]));
  const days = daysBetween(first, last);
  const W = 720;
  const H = 190;
  const left = 34;
  const right = 10;
  const top = 16;
  const bottom = 54;
  const plotW = W - left - right;
  const plotH = H - top - bottom;
  const max = Math.max(1, ...rows.map((r) => r.value));
  const bw = plotW / days.length;
  const y = (v) => top + plotH - (v / max) * plotH;
  const yTicks = [...new Set([0, Math.round(max / 2), max])];
  const step = tickStep(days.length, 8);
  const total = rows.reduce((s, r) => s + r.value, 0);
  const noted = rows.filter((r) => r.note);
  const summary = `${title}: ${total} ${what} over ${days.length} day(s), ${fmtDay(first)} to ${fmtDay(last)}; busiest day ${
    rows.reduce((a, b) => (b.value > a.value ? b : a), rows[0] ?? { day: first, value: 0 }).day
  }.${noted.length ? ` ${noteWhat}: ${noted.map((r) => `${fmtDay(r.day)} (${r.note})`).join('; ')}.` : ''}`;
  return el(
    'figure',
    { class: 'chart' },
    svg(
      'svg',
      { viewBox: `0 0 ${W} ${H}`, role: 'img', 'aria-label': summary, class: 'day-chart' },
      svg('title', {}, summary),
      yTicks.map((v) =>
        svg(
          'g',
          { class: 'tick' },
          svg('line', { x1: left, x2: W - right, y1: y(v), y2: y(v) }),
          svg('text', { x: left - 6, y: y(v) + 4, 'text-anchor': 'end' }, v),
        ),
      ),
      days.map((d, i) => {
        const r = byDay.get(d);
        const x = left + i * bw;
        return svg(
          'g',
          {},
          r && r.value > 0
            ? svg(
                'rect',
                { class: 'bar', x: x + bw * 0.15, width: Math.max(1, bw * 0.7), y: y(r.value), height: top + plotH - y(r.value) },
                svg('title', {}, `${fmtDay(d)}: ${r.value} ${what}${r.note ? `; ${noteWhat.toLowerCase()}: ${r.note}` : ''}`),
              )
            : null,
          r?.note ? svg('path', { class: 'flag', d: `M${x + bw / 2 - 5} ${top - 10} h10 l-5 7z` }) : null,
          i % step === 0 || i === days.length - 1
            ? svg(
                'g',
                { class: 'tick' },
                svg('line', { x1: x + bw / 2, x2: x + bw / 2, y1: top + plotH, y2: top + plotH + 4 }),
                svg('text', { x: x + bw / 2, y: top + plotH + 16, 'text-anchor': 'middle' }, shortDay(d)),
              )
            : null,
        );
      }),
      svg('line', { class: 'axis', x1: left, x2: W - right, y1: top + plotH, y2: top + plotH }),
      svg('line', { class: 'axis', x1: left, x2: left, y1: top, y2: top + plotH }),
      legend(
        [
          { mark: svg('rect', { class: 'bar', x: 0, y: -5, width: 9, height: 9 }), text: `${what} per day (UTC)` },
          ...(noted.length ? [{ mark: svg('path', { class: 'flag', d: 'M-1 -4 h10 l-5 7z' }), text: noteWhat }] : []),
        ],
        left,
        H - 10,
      ),
    ),
  );
}

/**
 * One lane per outlet (in the order they first reported), a mark per article at its time:
 * an outlet's first report ringed, copies of another outlet's article drawn hollow.
 * lanes: [{ outlet, articles: [{ id, title, published, duplicateOf }] }], earliest first.
 */
export function laneChart({ lanes, title }) {
  const dated = lanes.flatMap((l) => l.articles.filter((a) => a.published).map((a) => Date.parse(a.published)));
  if (!dated.length) return el('p', { class: 'hint' }, 'No dated articles to place on a time axis.');
  const first = isoDay(Math.min(...dated));
  const last = isoDay(Math.max(...dated));
  const days = daysBetween(first, last);
  const t0 = dayMs(first);
  const span = days.length * DAY;
  const laneH = 22;
  const left = 150;
  const right = 14;
  const top = 8;
  const W = 720;
  const plotW = W - left - right;
  const plotH = lanes.length * laneH;
  const H = top + plotH + 62;
  const x = (ms) => left + ((ms - t0) / span) * plotW;
  const step = tickStep(days.length, 8);
  const firsts = lanes.map((l) => {
    const a = l.articles.find((x) => x.published);
    return a ? `${l.outlet} ${fmtDay(a.published)}` : l.outlet;
  });
  const summary = `${title}: ${lanes.length} outlet(s) from ${fmtDay(first)} to ${fmtDay(last)}. First reports in order: ${firsts.join('; ')}.`;
  return el(
    'figure',
    { class: 'chart' },
    svg(
      'svg',
      // A group, not an image: its marks are links to the articles.
      { viewBox: `0 0 ${W} ${H}`, role: 'group', 'aria-label': summary, class: 'lane-chart' },
      svg('title', {}, summary),
      days.map((d, i) =>
        i % step === 0 || i === days.length - 1
          ? svg(
              'g',
              { class: 'tick' },
              svg('line', { x1: x(dayMs(d)), x2: x(dayMs(d)), y1: top, y2: top + plotH + 4 }),
              svg('text', { x: x(dayMs(d)), y: top + plotH + 16, 'text-anchor': 'start' }, shortDay(d)),
            )
          : null,
      ),
      lanes.map((lane, i) => {
        const cy = top + i * laneH + laneH / 2;
        const firstId = lane.articles.find((a) => a.published)?.id;
        return svg(
          'g',
          { class: 'lane' },
          svg('line', { class: 'lane-line', x1: left, x2: W - right, y1: cy, y2: cy }),
          svg(
            'text',
            { class: 'lane-label', x: left - 8, y: cy + 4, 'text-anchor': 'end' },
            lane.outlet.length > 22 ? `${lane.outlet.slice(0, 21)}…` : lane.outlet,
          ),
          lane.articles
            .filter((a) => a.published)
            .map((a) => {
              const cx = x(Date.parse(a.published));
              const kind = a.duplicateOf ? 'copy' : a.id === firstId ? 'first' : 'report';
              const what = kind === 'copy' ? 'copy of another article' : kind === 'first' ? "outlet's first report" : 'report';
              return svg(
                'a',
                {
                  href: `#/articles/${encodeURIComponent(a.id)}`,
                  class: `mark mark-${kind}`,
                  'aria-label': `${lane.outlet}, ${fmtDay(a.published)}: ${a.title} (${what})`,
                },
                svg('title', {}, `${lane.outlet}, ${a.published.slice(0, 16).replace('T', ' ')} UTC: ${a.title} (${what})`),
                kind === 'copy'
                  ? svg('rect', { x: cx - 4, y: cy - 4, width: 8, height: 8 })
                  : svg('circle', { cx, cy, r: kind === 'first' ? 6 : 4.5 }),
              );
            }),
        );
      }),
      svg('line', { class: 'axis', x1: left, x2: W - right, y1: top + plotH, y2: top + plotH }),
      legend(
        [
          { mark: svg('circle', { class: 'mark-first', cx: 4, cy: 0, r: 6 }), text: "outlet's first report" },
          { mark: svg('circle', { class: 'mark-report', cx: 4, cy: 0, r: 4.5 }), text: 'later report' },
          { mark: svg('rect', { class: 'mark-copy', x: 0, y: -4, width: 8, height: 8 }), text: "copy of another outlet's article" },
        ],
        left,
        H - 12,
      ),
    ),
  );
}

/**
 * Estimates with their 95 % intervals, one row per category (a week, an outlet): a dot at
 * the estimate, a whisker over the interval, on a 0–100 % axis. Rows without an estimate
 * are listed as such. rows: [{ label, value, low, high, answers }] (null where unknown).
 */
export function intervalChart({ rows, title, what }) {
  const W = 720;
  const left = 170;
  const right = 20;
  const top = 8;
  const rowH = 22;
  const plotW = W - left - right;
  const H = top + rows.length * rowH + 44;
  const x = (v) => left + v * plotW;
  const known = rows.filter((r) => r.value !== null);
  const summary = `${title}: ${known.map((r) => `${r.label} ${Math.round(r.value * 100)}% (${Math.round(r.low * 100)}–${Math.round(r.high * 100)}%)`).join('; ') || 'no estimate yet'}.`;
  return el(
    'figure',
    { class: 'chart' },
    svg(
      'svg',
      { viewBox: `0 0 ${W} ${H}`, role: 'img', 'aria-label': summary, class: 'interval-chart' },
      svg('title', {}, summary),
      [0, 0.25, 0.5, 0.75, 1].map((v) =>
        svg(
          'g',
          { class: 'tick' },
          svg('line', { x1: x(v), x2: x(v), y1: top, y2: top + rows.length * rowH }),
          svg('text', { x: x(v), y: top + rows.length * rowH + 14, 'text-anchor': 'middle' }, `${v * 100}%`),
        ),
      ),
      rows.map((r, i) => {
        const cy = top + i * rowH + rowH / 2;
        return svg(
          'g',
          {},
          svg(
            'text',
            { class: 'lane-label', x: left - 8, y: cy + 4, 'text-anchor': 'end' },
            r.label.length > 24 ? `${r.label.slice(0, 23)}…` : r.label,
          ),
          r.value === null
            ? svg('text', { x: left + 4, y: cy + 4 }, 'not enough answers yet')
            : [
                svg('line', { class: 'whisker', x1: x(r.low), x2: x(r.high), y1: cy, y2: cy }),
                svg(
                  'circle',
                  { class: 'estimate', cx: x(r.value), cy, r: 4.5 },
                  svg(
                    'title',
                    {},
                    `${r.label}: ${Math.round(r.value * 100)}% (95% interval ${Math.round(r.low * 100)}–${Math.round(r.high * 100)}%, ${r.answers} answers)`,
                  ),
                ),
              ],
        );
      }),
      legend(
        [
          { mark: svg('circle', { class: 'estimate', cx: 4, cy: 0, r: 4.5 }), text: `estimated ${what}` },
          { mark: svg('line', { class: 'whisker', x1: -2, x2: 10, y1: 0, y2: 0 }), text: '95% interval' },
        ],
        left,
        H - 8,
      ),
    ),
  );
}
