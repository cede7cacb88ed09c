// One story: who reported first and who joined when (an outlet-by-time lane chart and the
// same in words), its events in time order, the links that cross its edge with their
// evidence, and merging it into another story.
import { api } from './api.js';
import { el, fmtDay, fmtSpan, fmtTime, isFigure, plural, problem, statusLine } from './dom.js';
import { laneChart } from './charts.js';
import { scoreLine } from './evidence.js';
import { firstReporters, pickTarget } from './event-view.js';
import { correct } from './corrections.js';

export async function renderStory(container, id, ctx) {
  const d = await api(`/api/stories/${encodeURIComponent(id)}`);
  const s = d.story;
  if (s.id !== id) history.replaceState(null, '', `#/stories/${encodeURIComponent(s.id)}`);
  const status = statusLine();
  const mergeInto = pickTarget('stories', 'merge-story-into', 'Merge this story into', s.id);
  const note = el('input', { id: 'story-note', type: 'text', maxlength: 2000, placeholder: 'why (kept in the audit log)' });
  const merge = async () => {
    if (!/^st_[0-9a-f]{16}$/.test(mergeInto.value())) {
      status.replaceChildren(problem('Pick the story to merge into from the list (an st_ id).'));
      return;
    }
    const into = mergeInto.value();
    const show = async (storyId) => {
      ctx.changed();
      await ctx.navigate(`#/stories/${encodeURIComponent(storyId)}`);
      container.querySelector('.corrections .action-status')?.replaceWith(status);
    };
    const body = { kind: 'merge-stories', from: s.id, into, note: note.value.trim() || undefined };
    if (await correct(body, status, 'Merged this story into the other', () => show(s.id))) await show(into);
  };
  const chosen = new Set();
  const divide = async () => {
    if (!chosen.size) {
      status.replaceChildren(problem('Choose one or more articles first (the boxes in the list of articles).'));
      return;
    }
    const show = async () => {
      ctx.changed();
      await ctx.navigate(`#/stories/${encodeURIComponent(s.id)}`);
      container.querySelector('.corrections .action-status')?.replaceWith(status);
    };
    const body = { kind: 'split-story', from: s.id, articles: [...chosen], note: note.value.trim() || undefined };
    if (await correct(body, status, 'Moved the chosen articles to a new story', show)) await show();
  };
  const names = s.names.filter((n) => !isFigure(n));
  const lanes = d.byOutlet.map((g) => ({ outlet: g.outlet, articles: g.articles }));
  const copies = d.byOutlet.filter((g) => !g.independent).map((g) => g.outlet);

  container.replaceChildren(
    el(
      'article',
      { class: 'view story-view', 'aria-labelledby': 'view-title', 'data-id': s.id },
      el('p', { class: 'kind' }, 'Story'),
      el('h2', { id: 'view-title', tabindex: '-1' }, s.label),
      el(
        'p',
        { class: 'hint' },
        'Named after the headline of the article that opened it. Articles join a story by their whole text, names and time: an automatic grouping, a suggestion like every link.',
      ),
      el(
        'dl',
        { class: 'facts' },
        el('dt', {}, 'Reported'),
        el('dd', {}, `first ${fmtTime(s.firstSeen)}, latest ${fmtTime(s.lastSeen)}`),
        el('dt', {}, 'Coverage'),
        el(
          'dd',
          {},
          `${plural(s.articleCount, 'article')} from ${plural(s.outlets.length, 'outlet')} (${s.independentOutlets} independent) · ${plural(s.eventCount, 'event')}`,
        ),
        names.length ? [el('dt', {}, 'Names'), el('dd', {}, names.join(' · '))] : null,
      ),
      firstReporters(d.timeline, 'covered'),
      copies.length
        ? el('p', { class: 'meta' }, `Only copies of other outlets’ articles from: ${copies.join(', ')} (not independent confirmation).`)
        : null,
      el('h3', {}, 'Outlets over time'),
      laneChart({ lanes, title: 'Articles of this story by outlet and time of publication' }),
      el(
        'details',
        { class: 'articles-list' },
        el('summary', {}, `The same as a list: ${plural(s.articleCount, 'article')} by outlet (choose some to move them to a new story)`),
        d.byOutlet.map((g) =>
          el(
            'section',
            { class: 'outlet', 'aria-label': g.outlet },
            el('h4', {}, g.outlet),
            el(
              'ul',
              { class: 'plain' },
              g.articles.map((a, i) => {
                const box = el('input', {
                  type: 'checkbox',
                  id: `article-${g.outlet}-${i}`.replace(/[^A-Za-z0-9_-]/g, '_'),
                  onchange: (ev) => (ev.target.checked ? chosen.add(a.id) : chosen.delete(a.id)),
                });
                return el(
                  'li',
                  {},
                  box,
                  el('label', { for: box.id, class: 'sr-only' }, `Choose ${a.title} to move it to a new story`),
                  ' ',
                  el('a', { href: `#/articles/${encodeURIComponent(a.id)}` }, a.title || a.id),
                  el(
                    'span',
                    { class: 'meta' },
                    ` · ${fmtTime(a.published)}${i === 0 ? ' · first report' : ''}${a.duplicateOf ? ' · copy of another article' : ''}`,
                  ),
                );
              }),
            ),
          ),
        ),
      ),
      el('h3', {}, `Events, in the order they were first reported (${d.events.length})`),
      el(
        'ol',
        { class: 'story-events' },
        d.events.map((e) =>
          el(
            'li',
            {},
            el('a', { href: `#/events/${encodeURIComponent(e.id)}` }, e.label),
            el(
              'span',
              { class: 'meta' },
              ` · happened ${fmtSpan(e.timeStart, e.timeEnd)} · first reported ${fmtDay(e.firstSeen)} · ${plural(e.outlets.length, 'outlet')} · ${plural(e.mentionCount, 'mention')}`,
            ),
          ),
        ),
      ),
      el('h3', {}, `Links across stories (${d.crossLinks.length})`),
      d.crossLinks.length
        ? el(
            'ul',
            { class: 'cross-links' },
            d.crossLinks.map((c) =>
              el(
                'li',
                {},
                el(
                  'p',
                  { class: 'meta' },
                  c.direction === 'in'
                    ? 'A sentence from another story, linked to this story’s event '
                    : 'A sentence of this story, linked to another story’s event ',
                  el('a', { href: `#/events/${encodeURIComponent(c.eventId)}` }, c.eventLabel),
                ),
                el('blockquote', {}, c.text ?? '(text erased under the retention policy)'),
                scoreLine(c.score, c.evidence),
                el(
                  'p',
                  { class: 'meta' },
                  `${c.outlet} · `,
                  el('a', { href: `#/articles/${encodeURIComponent(c.articleId)}` }, c.articleTitle || c.articleId),
                ),
              ),
            ),
          )
        : el(
            'p',
            { class: 'hint' },
            'None: no sentence of another story was linked to these events, and none of these articles to another story’s events.',
          ),
      d.merges.length || d.splits.length
        ? el(
            'p',
            { class: 'meta' },
            d.merges.length ? `Consolidation merged ${plural(d.merges.length, 'other story', 'other stories')} into this one. ` : '',
            d.splits.length ? `It took part in ${plural(d.splits.length, 'split')}. ` : '',
            '(Machine suggestions too.)',
          )
        : null,
      el(
        'form',
        { class: 'corrections', 'aria-label': 'Correct this story', onsubmit: (ev) => ev.preventDefault() },
        el('h3', {}, 'Correct the machine'),
        el('label', { for: 'story-note', class: 'field' }, el('span', {}, 'Note'), note),
        el('div', { class: 'actions' }, mergeInto.field, el('button', { type: 'button', onclick: () => void merge() }, 'Merge')),
        el(
          'div',
          { class: 'actions' },
          el('button', { type: 'button', id: 'divide-button', onclick: () => void divide() }, 'Move the chosen articles to a new story'),
        ),
        status,
      ),
    ),
  );
}
