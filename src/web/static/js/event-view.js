// One event: what happened and when (saying what each date means), who reported it first,
// mentions per day on a labelled day axis, its mentions by outlet with score and evidence,
// and the analyst's corrections: merge, split, move, detach.
import { api, query } from './api.js';
import { chips, el, fmtDay, fmtSpan, fmtTime, icon, isFigure, plural, problem, safeUrl, statusLine } from './dom.js';
import { dayChart } from './charts.js';
import { scoreLine } from './evidence.js';
import { correct } from './corrections.js';

/** What the dates of an event mean, in a sentence. */
function datesText(e) {
  const happened = fmtSpan(e.timeStart, e.timeEnd);
  const ahead = e.firstSeen.slice(0, 10) < e.timeStart;
  return [
    el('dt', {}, 'Happened'),
    el('dd', {}, happened, el('span', { class: 'hint' }, ' (the days its sentences give, or their articles’ dates where they give none)')),
    el('dt', {}, 'Reported'),
    el(
      'dd',
      {},
      `first ${fmtTime(e.firstSeen)}, last ${fmtTime(e.lastSeen)}`,
      ahead ? el('span', { class: 'hint' }, ' (first reported before the day it happened: it was announced or expected in advance)') : null,
    ),
  ];
}

/** "First reported by A (5 Oct 2026), then B and C (6 Oct 2026)." */
export function firstReporters(timeline, noun = 'reported') {
  const days = timeline.filter((t) => t.newOutlets.length);
  if (!days.length) return null;
  const [head, ...rest] = days;
  const part = (t) => `${t.newOutlets.join(', ')} (${fmtDay(t.day)})`;
  return el(
    'p',
    { class: 'first-reporters' },
    `First ${noun} by ${part(head)}${rest.length ? `; then ${rest.map(part).join('; ')}` : ''}.`,
  );
}

/** An input that offers matching events (or stories) by their words; its value is the id. */
export function pickTarget(kind, id, label, exclude) {
  const listId = `${id}-options`;
  const input = el('input', {
    id,
    type: 'search',
    list: listId,
    placeholder: `${kind === 'events' ? 'ev' : 'st'}_… or words`,
    autocomplete: 'off',
    maxlength: 200,
  });
  const options = el('datalist', { id: listId });
  let typing = null;
  input.addEventListener('input', () => {
    clearTimeout(typing);
    const words = input.value.trim();
    if (words.length < 2 || /^(ev|st)_[0-9a-f]{16}$/.test(words)) return;
    typing = setTimeout(async () => {
      try {
        const page = await api(`/api/${kind}?${query({ q: words, limit: 10 })}`);
        options.replaceChildren(...page[kind].filter((x) => x.id !== exclude).map((x) => el('option', { value: x.id }, x.label)));
      } catch {
        options.replaceChildren();
      }
    }, 200);
  });
  return { field: el('label', { for: id, class: 'field' }, el('span', {}, label), input, options), value: () => input.value.trim() };
}

export async function renderEvent(container, id, ctx) {
  const d = await api(`/api/events/${encodeURIComponent(id)}`);
  const e = d.event;
  if (e.id !== id) history.replaceState(null, '', `#/events/${encodeURIComponent(e.id)}`);
  const names = e.participants.filter((p) => !isFigure(p));
  const figures = e.participants.filter(isFigure);
  const selected = new Map();
  const status = statusLine();

  const mentionNode = (m) => {
    const key = `${m.articleId}\n${m.sentenceIndex}`;
    const box = el('input', {
      type: 'checkbox',
      id: `pick-${m.articleId}-${m.sentenceIndex}`.replace(/[^A-Za-z0-9_-]/g, '_'),
      onchange: (ev) => (ev.target.checked ? selected.set(key, { article: m.articleId, sentence: m.sentenceIndex }) : selected.delete(key)),
    });
    return el(
      'li',
      { class: 'mention' },
      el(
        'div',
        { class: 'mention-pick' },
        box,
        el('label', { for: box.id, class: 'sr-only' }, `Choose this sentence from ${m.outlet} for a split or move`),
      ),
      el(
        'div',
        { class: 'mention-body' },
        el('blockquote', {}, m.text ?? '(text erased under the retention policy)'),
        scoreLine(m.score, m.evidence, m.rank),
        el(
          'div',
          { class: 'meta' },
          `published ${fmtTime(m.published)} · `,
          el('a', { href: `#/articles/${encodeURIComponent(m.articleId)}` }, m.articleTitle || m.articleId),
          safeUrl(m.articleUrl) ? [' · ', el('a', { href: m.articleUrl, rel: 'noopener noreferrer', target: '_blank' }, 'source')] : null,
          m.isCopy ? [' · ', icon('copy'), ' copy of another outlet’s article'] : null,
          ' · ',
          el(
            'button',
            {
              type: 'button',
              class: 'small',
              onclick: () =>
                void act(
                  { kind: 'detach', from: e.id, mentions: [{ article: m.articleId, sentence: m.sentenceIndex }] },
                  'Detached the sentence into an event of its own',
                ),
            },
            'Detach',
          ),
        ),
      ),
    );
  };

  const note = el('input', { id: 'correction-note', type: 'text', maxlength: 2000, placeholder: 'why (kept in the audit log)' });
  const moveTo = pickTarget('events', 'move-to', 'Move the chosen sentences to', e.id);
  const mergeInto = pickTarget('events', 'merge-into', 'Merge this event into', e.id);

  async function act(body, done) {
    // The view is drawn again (the survivor's, after a merge; this one's after an undo) keeping the outcome in it.
    const show = async (id) => {
      ctx.changed();
      await ctx.navigate(`#/events/${encodeURIComponent(id)}`);
      container.querySelector('.corrections .action-status')?.replaceWith(status);
    };
    // One correction at a time: the view's buttons wait for this one.
    const buttons = [...container.querySelectorAll('.event-view button')];
    for (const b of buttons) b.disabled = true;
    try {
      const result = await correct({ ...body, note: note.value.trim() || undefined }, status, done, () => show(e.id));
      if (result) await show(body.kind === 'merge' ? body.into : e.id);
    } finally {
      for (const b of buttons) b.disabled = false;
    }
  }
  const chosen = () => [...selected.values()];
  const needChosen = () => {
    if (chosen().length) return true;
    status.replaceChildren(problem('Choose one or more sentences first (the boxes beside them).'));
    return false;
  };

  const corrections = el(
    'form',
    { class: 'corrections', 'aria-label': 'Correct this event', onsubmit: (ev) => ev.preventDefault() },
    el('h3', {}, 'Correct the machine'),
    el(
      'p',
      { class: 'hint' },
      'Each correction is recorded with who made it, can be undone from the corrections log, and binds the linker from then on.',
    ),
    el('label', { for: 'correction-note', class: 'field' }, el('span', {}, 'Note'), note),
    el(
      'div',
      { class: 'actions' },
      el(
        'button',
        {
          type: 'button',
          onclick: () =>
            needChosen() && void act({ kind: 'split', from: e.id, mentions: chosen() }, 'Split the chosen sentences into a new event'),
        },
        icon('split'),
        ' Split chosen into a new event',
      ),
    ),
    el(
      'div',
      { class: 'actions' },
      moveTo.field,
      el(
        'button',
        {
          type: 'button',
          onclick: () => {
            if (!needChosen()) return;
            if (!/^ev_[0-9a-f]{16}$/.test(moveTo.value()))
              return status.replaceChildren(problem('Pick the event to move them to from the list (an ev_ id).'));
            void act({ kind: 'move', from: e.id, to: moveTo.value(), mentions: chosen() }, 'Moved the chosen sentences');
          },
        },
        'Move',
      ),
    ),
    el(
      'div',
      { class: 'actions' },
      mergeInto.field,
      el(
        'button',
        {
          type: 'button',
          id: 'merge-button',
          onclick: () => {
            if (!/^ev_[0-9a-f]{16}$/.test(mergeInto.value()))
              return status.replaceChildren(problem('Pick the event to merge into from the list (an ev_ id).'));
            void act({ kind: 'merge', from: e.id, into: mergeInto.value() }, 'Merged this event into the other');
          },
        },
        icon('merge'),
        ' Merge',
      ),
    ),
    status,
  );

  container.replaceChildren(
    el(
      'article',
      { class: 'view event-view', 'aria-labelledby': 'view-title', 'data-id': e.id },
      el(
        'p',
        { class: 'kind' },
        'Event',
        e.story ? [' · ', el('a', { href: `#/stories/${encodeURIComponent(e.story)}` }, 'open its story')] : null,
      ),
      el('h2', { id: 'view-title', tabindex: '-1' }, e.label),
      el('p', { class: 'hint' }, 'Named after the sentence that opened it.'),
      el(
        'dl',
        { class: 'facts' },
        datesText(e),
        el('dt', {}, 'Coverage'),
        el('dd', {}, `${plural(e.outlets.length, 'outlet')} (${e.independentOutlets} independent) · ${plural(e.mentionCount, 'mention')}`),
      ),
      firstReporters(d.timeline),
      chips('Participants', names, 'person'),
      chips('Places', e.places, 'place'),
      chips('Figures mentioned', figures, 'figure'),
      d.merges.length
        ? el(
            'p',
            { class: 'meta' },
            `Consolidation merged ${plural(d.merges.length, 'other event')} into this one (a machine suggestion too).`,
          )
        : null,
      d.splits.map((s) =>
        el(
          'p',
          { class: 'meta' },
          s.from === e.id
            ? `Consolidation moved ${plural(s.mentions, 'mention')} of this event to another that reads as a different happening (parts alike ${s.score.toFixed(2)}): `
            : `Consolidation split this event off another, moving ${plural(s.mentions, 'mention')} here (parts alike ${s.score.toFixed(2)}): `,
          el('a', { href: `#/events/${encodeURIComponent(s.from === e.id ? s.into : s.from)}` }, 'the other event'),
        ),
      ),
      d.timeline.length
        ? dayChart({
            rows: d.timeline.map((t) => ({ day: t.day, value: t.mentions, note: t.newOutlets.join(', ') })),
            first: d.timeline[0].day,
            last: d.timeline.at(-1).day,
            what: 'mentions',
            noteWhat: 'First report by an outlet',
            title: 'Mentions of this event per day of publication',
          })
        : null,
      el('h3', {}, `Mentions by outlet, in the order they first reported it`),
      d.byOutlet.map((g) =>
        el(
          'section',
          { class: 'outlet', 'aria-label': g.outlet },
          el(
            'h4',
            {},
            g.outlet,
            g.independent
              ? null
              : el('span', { class: 'copy' }, ' · only copies of another outlet’s article (not independent confirmation)'),
          ),
          el('ul', { class: 'mentions' }, g.mentions.map(mentionNode)),
        ),
      ),
      corrections,
    ),
  );
}
