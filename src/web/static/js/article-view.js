// One article: its sentences, each marked with the events it reports.
import { api } from './api.js';
import { el, fmtTime, safeUrl } from './dom.js';
import { scoreLine } from './evidence.js';

export async function renderArticle(container, id) {
  const d = await api(`/api/articles/${encodeURIComponent(id)}`);
  const a = d.article;
  const events = [...new Set(d.sentences.flatMap((s) => s.links.map((l) => l.eventId)))];
  const tone = (eventId) => `tone-${events.indexOf(eventId) % 6}`;
  container.replaceChildren(
    el(
      'article',
      { class: 'view article-view', 'aria-labelledby': 'view-title' },
      el(
        'p',
        { class: 'kind' },
        'Article',
        a.story ? [' · ', el('a', { href: `#/stories/${encodeURIComponent(a.story)}` }, 'open its story')] : null,
      ),
      el('h2', { id: 'view-title', tabindex: '-1' }, a.title || a.id),
      el(
        'p',
        { class: 'meta' },
        `${a.outlet} · published ${fmtTime(a.published)}`,
        a.duplicateOf
          ? [
              a.copySimilarity === null || a.copySimilarity >= 1
                ? ' · verbatim copy of '
                : ` · edited copy (similarity ${a.copySimilarity.toFixed(2)}) of `,
              el('a', { href: `#/articles/${encodeURIComponent(a.duplicateOf)}` }, 'an earlier article'),
            ]
          : null,
        safeUrl(a.url) ? [' · ', el('a', { href: a.url, rel: 'noopener noreferrer', target: '_blank' }, 'source')] : null,
      ),
      el(
        'p',
        { class: 'hint' },
        `Sentences marked at the side report an event (${events.length} here); the others were not taken as reporting one. Event-ness is how strongly a sentence reads as reporting a concrete happening.`,
      ),
      el(
        'ol',
        { class: 'sentences' },
        d.sentences.map((s) =>
          el(
            'li',
            { class: `sentence${s.isMention ? ' is-mention' : ''} ${s.links[0] ? tone(s.links[0].eventId) : ''}` },
            el('p', {}, s.text || '(text erased under the retention policy)'),
            el('p', { class: 'meta' }, `sentence ${s.index + 1} · event-ness ${s.eventness.toFixed(2)}`),
            s.links.map((l) =>
              el(
                'div',
                { class: 'link' },
                el('span', { class: `swatch ${tone(l.eventId)}`, 'aria-hidden': 'true' }),
                'reports ',
                el('a', { href: `#/events/${encodeURIComponent(l.eventId)}` }, l.eventLabel),
                scoreLine(l.score, l.evidence, l.rank),
              ),
            ),
          ),
        ),
      ),
    ),
  );
}
