// Corrections from the page: make one through the API, offer its undo at once, and the
// audit log of every correction with who made it, when and why.
import { api, explain } from './api.js';
import { el, fmtTime, icon, plural, problem, statusLine, wideView } from './dom.js';

/**
 * Makes a correction; says what happened in `status` with an undo button, which calls
 * `undone` once the undo is made. Answers the record, or null.
 */
export async function correct(body, status, doneText, undone) {
  status.replaceChildren(el('span', {}, 'Working…'));
  try {
    const record = await api('/api/corrections', { method: 'POST', body });
    status.replaceChildren(
      el('span', { class: 'done' }, icon('ok'), ` ${doneText} (${record.id}). `),
      el(
        'button',
        {
          type: 'button',
          class: 'undo',
          onclick: async (e) => {
            e.target.disabled = true;
            try {
              const undo = await api(`/api/corrections/${record.id}/undo`, { method: 'POST', body: {} });
              status.replaceChildren(el('span', { class: 'done' }, icon('undo'), ` Undone (${undo.id}): as it was before.`));
              await undone();
            } catch (err) {
              status.replaceChildren(problem(explain(err, 'Corrections need')));
            }
          },
        },
        icon('undo'),
        ' Undo',
      ),
    );
    return record;
  } catch (err) {
    status.replaceChildren(problem(explain(err, 'Corrections need')));
    return null;
  }
}

const KINDS = {
  merge: 'merged an event into another',
  split: 'split sentences off into a new event',
  move: 'moved sentences to another event',
  detach: 'detached a sentence',
  'merge-stories': 'merged a story into another',
  'split-story': 'divided a story',
  threshold: 'moved the link threshold',
  undo: 'undid a correction',
};

const target = (id) => (id.startsWith('st_') ? `#/stories/${encodeURIComponent(id)}` : `#/events/${encodeURIComponent(id)}`);

/** The audit log, newest first, each with its undo while it stands. */
export async function renderCorrections(container) {
  const page = await api('/api/corrections?limit=200');
  const status = statusLine();
  const rows = page.corrections.map((c) =>
    el(
      'tr',
      { 'data-id': c.id },
      el('td', {}, fmtTime(c.at)),
      el('td', {}, c.by),
      el(
        'td',
        {},
        KINDS[c.kind] ?? c.kind,
        c.mentions.length ? ` (${plural(c.mentions.length, 'sentence')})` : '',
        c.threshold
          ? ` (adjustment ${c.threshold.from.toFixed(3)} → ${c.threshold.to.toFixed(3)}${c.threshold.round ? `, round ${c.threshold.round}` : ''})`
          : '',
      ),
      el(
        'td',
        {},
        c.events.map((id, i) => [i ? ' → ' : '', el('a', { href: target(id) }, id)]),
      ),
      el('td', {}, c.note ?? ''),
      el(
        'td',
        {},
        c.undoneBy
          ? `undone by ${c.undoneBy}`
          : c.undoes
            ? `undoes ${c.undoes}`
            : el(
                'button',
                {
                  type: 'button',
                  class: 'small',
                  'aria-label': `Undo ${c.id}`,
                  onclick: async () => {
                    try {
                      await api(`/api/corrections/${c.id}/undo`, { method: 'POST', body: {} });
                      await renderCorrections(container);
                    } catch (err) {
                      status.replaceChildren(problem(explain(err, 'Corrections need')));
                    }
                  },
                },
                icon('undo'),
                ' Undo',
              ),
      ),
    ),
  );
  container.replaceChildren(
    wideView(
      'log',
      'Corrections',
      `Every change an analyst made to the machine's suggestions: who, when, what and why (${plural(page.total, 'correction')}). An undo is refused when what the correction touched has changed since, because it would lose that change.`,
      status,
      page.corrections.length
        ? el(
            'table',
            { class: 'grid', id: 'audit-log' },
            el('caption', { class: 'sr-only' }, 'Corrections, newest first'),
            el(
              'thead',
              {},
              el(
                'tr',
                {},
                ['When', 'Who', 'What', 'Events or stories', 'Note', 'State'].map((h) => el('th', { scope: 'col' }, h)),
              ),
            ),
            el('tbody', {}, rows),
          )
        : el('p', { class: 'hint' }, 'No corrections yet. Open an event to merge, split, move or detach its sentences.'),
    ),
  );
}
