// Reviews: start a round, answer its items one by one (same event, different, unsure), and
// read what the answers say: agreement, each reviewer's estimated error rate, precision and
// recall with their intervals by week and by outlet, and the threshold move they suggest.
import { api, explain } from './api.js';
import { el, fmtTime, icon, plural, problem, statusLine, wideView } from './dom.js';
import { intervalChart } from './charts.js';
import { evidenceText, scoreLine } from './evidence.js';

const REVIEWER = 'strandline-reviewer';
const pctOrDash = (x) => (x === null || x === undefined ? '—' : `${Math.round(x * 100)}%`);
const num = (x, d = 2) => (x === null || x === undefined ? '—' : x.toFixed(d));

function estimateText(e) {
  return e.value === null
    ? 'not enough answers yet'
    : `${pctOrDash(e.value)} (95% interval ${pctOrDash(e.low)}–${pctOrDash(e.high)}; ${plural(e.answers, 'answer')})`;
}

async function renderItem(target, round, reviewer, onAnswered) {
  // 204 (nothing left for this reviewer) comes back as null.
  const it = await api(`/api/reviews/${round}/next?reviewer=${encodeURIComponent(reviewer)}`);
  if (it === null) {
    target.replaceChildren(el('p', { class: 'done' }, icon('ok'), ' Nothing left for you in this round. Thank you.'));
    return;
  }
  const answer = async (verdict) => {
    for (const b of target.querySelectorAll('button')) b.disabled = true;
    await api(`/api/reviews/${round}/answers`, { method: 'POST', body: { item: it.item, reviewer, verdict } });
    await onAnswered();
  };
  target.replaceChildren(
    el(
      'div',
      { class: 'review-card', id: 'review-card' },
      el(
        'p',
        { class: 'kind' },
        `Item ${it.item + 1} · ${it.stratum.replaceAll('-', ' ')} · ${
          it.mergedFrom
            ? `consolidation merged the event this sentence opened into this one (score ${it.score.toFixed(2)})`
            : it.linked
              ? 'the linker linked them'
              : 'the linker did not link them'
        }`,
      ),
      el('h3', { id: 'review-question', tabindex: '-1' }, it.question),
      el('p', { class: 'meta' }, `The sentence, from ${it.sentence.outlet}, ${fmtTime(it.sentence.published)} (${it.sentence.title}):`),
      el('blockquote', {}, it.sentence.text ?? '(text erased under the retention policy)'),
      el('p', { class: 'meta' }, 'The event:'),
      el('blockquote', {}, it.event.label),
      it.event.examples.length
        ? el(
            'ul',
            { class: 'plain meta' },
            it.event.examples.map((x) => el('li', {}, `also: “${x}”`)),
          )
        : null,
      // A link shows its score and evidence; a sentence left unlinked (or the opener of a merged event), why it opened an event of its own.
      it.evidence
        ? it.linked && !it.mergedFrom
          ? scoreLine(it.score, it.evidence)
          : el('div', { class: 'evidence' }, evidenceText(it.evidence))
        : null,
      el(
        'p',
        { class: 'meta', 'data-role': 'score' },
        it.mergedFrom
          ? `merge score ${it.score.toFixed(2)} (the two events' centroids alike, times the time decay)`
          : `score ${it.score.toFixed(2)}, needed ${it.bar.toFixed(2)}`,
      ),
      el(
        'div',
        { class: 'verdicts', role: 'group', 'aria-labelledby': 'review-question' },
        el('button', { type: 'button', onclick: () => void answer('same') }, 'Same event'),
        el('button', { type: 'button', onclick: () => void answer('different') }, 'Different events'),
        el('button', { type: 'button', onclick: () => void answer('unsure') }, 'Cannot tell'),
      ),
    ),
  );
}

async function renderReport(target, round) {
  const r = await api(`/api/reviews/${round}/report`);
  const q = r.quality;
  const rows = (list, label, measure) => list.map((x) => ({ label: x[label], ...x[measure] }));
  target.replaceChildren(
    el('h3', {}, 'What the answers say'),
    el(
      'p',
      {},
      `${r.answered} of ${r.items} items answered (${r.complete} by every reviewer they want), ${plural(r.answers, 'answer')}. `,
      `Agreement (Krippendorff’s alpha, nominal): ${num(r.alpha.overall, 3)}`,
      el('span', { class: 'hint' }, ' (at least 0.800 reliable; 0.667 to 0.800 for tentative conclusions only).'),
    ),
    el(
      'p',
      {},
      `Precision of the links made: ${estimateText(q.overall.precision)}. Recall of the links there were to make, among the linker's candidates: ${estimateText(q.overall.recall)}.`,
      q.overall.merges.answers ? ` Consolidation's merges found right: ${estimateText(q.overall.merges)}.` : '',
      q.overall.backReferences?.answers
        ? ` Back-references (sentences pointing back at a happening) found right: ${estimateText(q.overall.backReferences)}.`
        : '',
    ),
    el(
      'table',
      { class: 'grid', id: 'reviewers' },
      el('caption', { class: 'sr-only' }, 'Reviewers'),
      el(
        'thead',
        {},
        el(
          'tr',
          {},
          ['Reviewer', 'Answers', 'Cannot tell', 'Estimated error rate', 'Agreement without them'].map((h) =>
            el('th', { scope: 'col' }, h),
          ),
        ),
      ),
      el(
        'tbody',
        {},
        r.reviewers.map((x) =>
          el(
            'tr',
            {},
            el('td', {}, x.reviewer),
            el('td', {}, String(x.answers)),
            el('td', {}, String(x.unsure)),
            el('td', {}, pctOrDash(x.errorRate)),
            el('td', {}, num(x.alphaWithout, 3)),
          ),
        ),
      ),
    ),
    el('h4', {}, 'By week of publication'),
    intervalChart({ rows: rows(q.byWeek, 'week', 'precision'), title: 'Precision of links by week', what: 'precision' }),
    intervalChart({ rows: rows(q.byWeek, 'week', 'recall'), title: 'Recall of links by week', what: 'recall' }),
    el('h4', {}, 'By outlet'),
    intervalChart({ rows: rows(q.byOutlet, 'outlet', 'precision'), title: 'Precision of links by outlet', what: 'precision' }),
    intervalChart({ rows: rows(q.byOutlet, 'outlet', 'recall'), title: 'Recall of links by outlet', what: 'recall' }),
    el('h4', {}, 'Corrections the answers call for'),
    el(
      'p',
      { class: 'hint' },
      'Where the combined answers contradict the linker: a link answered "different" detaches the sentence; a sentence left unlinked answered "same" moves into that event. Each goes into the corrections log and can be undone there.',
    ),
    el(
      'button',
      {
        type: 'button',
        id: 'review-apply',
        onclick: async (e) => {
          e.target.disabled = true;
          const out = e.target.nextElementSibling;
          try {
            const r = await api(`/api/reviews/${round}/corrections`, { method: 'POST', body: {} });
            out.replaceChildren(
              `${plural(r.made.length, 'correction')} made, ${r.refused.length} refused (changed since), ${r.agreed} item(s) agreed with the linker.`,
            );
          } catch (err) {
            out.replaceChildren(problem(explain(err, 'Corrections need')));
          } finally {
            e.target.disabled = false;
          }
        },
      },
      'Make these corrections',
    ),
    el('p', { class: 'action-status', role: 'status', 'aria-live': 'polite' }),
    el('h4', {}, 'The link threshold'),
    el(
      'p',
      {},
      !r.calibration.placed || r.calibration.fitted === 0
        ? 'The answers do not place the bar within reach of where it is: leave the threshold as it is.'
        : r.calibration.validated
          ? `The answers put the bar ${r.calibration.offset >= 0 ? 'higher' : 'lower'} by ${Math.abs(r.calibration.offset).toFixed(3)}. On answers the fit did not see, the decisions' F1 would go from ${num(r.calibration.cvF1Before)} to ${num(r.calibration.cvF1After)}.`
          : `The answers would put the bar ${r.calibration.fitted >= 0 ? 'higher' : 'lower'} by ${Math.abs(r.calibration.fitted).toFixed(3)}, but on answers the fit did not see that does no better (F1 ${num(r.calibration.cvF1Before)} before, ${num(r.calibration.cvF1After)} after): leave the threshold as it is.`,
    ),
    r.calibration.validated ? thresholdCaveat(r.calibration) : '',
    el('div', { id: 'threshold-state' }),
  );
  await renderThreshold(target.querySelector('#threshold-state'), round, r.calibration.validated);
}

/** Why a suggested move may still want weighing: it rests on few answers. */
function thresholdCaveat(c) {
  const notes = [];
  if (c.decided < 100) notes.push(`it rests on ${plural(c.decided, 'decided item')} only (a few hundred make it firmer)`);
  return notes.length ? el('p', { class: 'hint', id: 'threshold-caveat' }, `Weigh it before applying: ${notes.join('; ')}.`) : '';
}

const signed = (x) => `${x > 0 ? '+' : x < 0 ? '−' : '±'}${Math.abs(x).toFixed(3)}`;

/** The threshold in effect, with the round's fit to apply and the adjustment in effect to roll back. */
async function renderThreshold(target, round, canApply) {
  let t;
  try {
    t = await api('/api/link-threshold');
  } catch {
    return; // not offered by this server
  }
  const status = el('p', { class: 'action-status', role: 'status', 'aria-live': 'polite' });
  const act = (id, label, path, body) =>
    el(
      'button',
      {
        type: 'button',
        id,
        onclick: async (e) => {
          e.target.disabled = true;
          try {
            await api(path, { method: 'POST', body });
            await renderThreshold(target, round, canApply);
            target
              .querySelector('[role=status]')
              .replaceChildren(el('span', { class: 'done' }, icon('ok'), ' Done; in effect from the next sentence linked.'));
          } catch (err) {
            status.replaceChildren(problem(explain(err, 'Moving the threshold needs')));
            e.target.disabled = false;
          }
        },
      },
      label,
    );
  const current = t.history.find((h) => h.correction === t.current);
  target.replaceChildren(
    el(
      'p',
      { id: 'threshold-in-effect' },
      t.current
        ? `In effect: the configured ${t.configured.toFixed(3)} moved by ${signed(t.offset)}, so ${t.base.toFixed(3)}${current?.round ? `, fitted to round ${current.round}` : ', set by hand'} (${current?.by ?? ''}, ${current ? fmtTime(current.at) : ''}).`
        : `In effect: ${t.configured.toFixed(3)}, as configured.`,
      t.calibration === 'stream'
        ? el('span', { class: 'hint' }, ' Each sentence’s bar is then moved from there as the stream shows itself.')
        : '',
    ),
    el(
      'p',
      { class: 'hint' },
      'A move changes links from the next sentence on; nothing linked before changes. It goes into the corrections log and can be rolled back.',
    ),
    canApply ? act('threshold-apply', 'Apply this move', '/api/link-threshold', { round, note: `fitted to review round ${round}` }) : '',
    t.current ? act('threshold-rollback', 'Roll back the adjustment in effect', '/api/link-threshold/rollback', {}) : '',
    status,
  );
}

export async function renderReviews(container) {
  const status = statusLine();
  const view = (...children) =>
    wideView(
      'ok',
      'Reviews',
      'Reviewers judge a sample of the linker’s decisions, drawn so that the answers estimate precision and recall without bias: links near the bar and far above it, links across stories, and sentences left unlinked beside their nearest event. Several reviewers per item; their answers are combined by each one’s estimated error rate.',
      ...children,
    );
  let rounds;
  try {
    ({ rounds } = await api('/api/reviews'));
  } catch (err) {
    container.replaceChildren(view(problem(explain(err, 'Reviews need'))));
    return;
  }
  const size = el('input', { id: 'review-size', type: 'number', min: 1, max: 5000, value: 200 });
  const per = el('input', { id: 'review-per-item', type: 'number', min: 1, max: 15, value: 5 });
  const start = el(
    'form',
    {
      class: 'add-form',
      'aria-label': 'Start a review round',
      onsubmit: async (e) => {
        e.preventDefault();
        try {
          const made = await api('/api/reviews', {
            method: 'POST',
            body: { size: Number(size.value), reviewersPerItem: Number(per.value) },
          });
          location.hash = `#/reviews/${made.id}`;
        } catch (err) {
          status.replaceChildren(problem(explain(err, 'Reviews need')));
        }
      },
    },
    el('label', { for: 'review-size', class: 'field' }, el('span', {}, 'Items to review'), size),
    el('label', { for: 'review-per-item', class: 'field' }, el('span', {}, 'Reviewers per item'), per),
    el('button', { type: 'submit' }, 'Start a round'),
  );
  const chosen = location.hash.match(/^#\/reviews\/(rv_[0-9a-f]{12})$/)?.[1] ?? rounds[0]?.id ?? null;
  const work = el('div', { id: 'review-work' });
  const report = el('div', { id: 'review-report' });
  container.replaceChildren(
    view(
      status,
      start,
      rounds.length
        ? el(
            'nav',
            { 'aria-label': 'Review rounds' },
            el(
              'ul',
              { class: 'plain' },
              rounds.map((r) =>
                el(
                  'li',
                  {},
                  el('a', { href: `#/reviews/${r.id}`, 'aria-current': r.id === chosen ? 'true' : null }, r.id),
                  ` · drawn ${fmtTime(r.created)} by ${r.by} · ${plural(r.items, 'item')}, ${plural(r.reviewersPerItem, 'reviewer')} each`,
                ),
              ),
            ),
          )
        : el('p', { class: 'hint' }, 'No rounds yet.'),
      work,
      report,
    ),
  );
  if (!chosen) return;
  const name = el('input', {
    id: 'reviewer-name',
    type: 'text',
    maxlength: 100,
    value: sessionStorage.getItem(REVIEWER) ?? '',
    autocomplete: 'name',
  });
  const item = el('div', { id: 'review-item' });
  const refresh = async () => {
    try {
      await renderReport(report, chosen);
      if (name.value.trim()) await renderItem(item, chosen, name.value.trim(), refresh);
      item.querySelector('#review-question')?.focus();
    } catch (err) {
      status.replaceChildren(problem(explain(err, 'Reviews need')));
    }
  };
  work.replaceChildren(
    el('h3', {}, `Round ${chosen}`),
    el(
      'form',
      {
        class: 'add-form',
        'aria-label': 'Who is reviewing',
        onsubmit: (e) => {
          e.preventDefault();
          sessionStorage.setItem(REVIEWER, name.value.trim());
          void refresh();
        },
      },
      el('label', { for: 'reviewer-name', class: 'field' }, el('span', {}, 'Your name (kept with your answers)'), name),
      el('button', { type: 'submit' }, 'Review'),
    ),
    item,
  );
  await refresh();
}
