// The polled feeds: their health and delay, and adding, pausing, resuming and removing them.
import { api, explain } from './api.js';
import { el, fmtTime, icon, plural, problem, statusLine, wideView } from './dom.js';

const HEALTH = {
  ok: ['ok', 'polled fine'],
  failing: ['fail', 'failing'],
  paused: ['pause', 'paused'],
  waiting: ['wait', 'not polled yet'],
};

function delay(seconds) {
  if (seconds === null) return 'no new items yet';
  if (seconds < 120) return `${Math.round(seconds)} s`;
  if (seconds < 7200) return `${Math.round(seconds / 60)} min`;
  return `${(seconds / 3600).toFixed(1)} h`;
}

export async function renderFeeds(container) {
  const { feeds } = await api('/api/feeds');
  const status = statusLine();
  const again = () => renderFeeds(container).then(() => container.querySelector('.action-status')?.replaceWith(status));
  const run = async (what, call) => {
    try {
      await call();
      status.replaceChildren(el('span', { class: 'done' }, icon('ok'), ` ${what}.`));
      await again();
    } catch (err) {
      status.replaceChildren(problem(explain(err, 'Changing feeds needs')));
    }
  };
  const url = el('input', { id: 'feed-url', type: 'url', required: true, maxlength: 2048, placeholder: 'https://…' });
  const outlet = el('input', { id: 'feed-outlet', type: 'text', maxlength: 200 });
  const every = el('input', { id: 'feed-interval', type: 'number', min: 30, max: 86400, placeholder: 'default' });
  const add = el(
    'form',
    {
      class: 'add-form',
      'aria-label': 'Add a feed',
      onsubmit: (e) => {
        e.preventDefault();
        const body = {
          url: url.value.trim(),
          ...(outlet.value.trim() ? { outlet: outlet.value.trim() } : {}),
          ...(every.value ? { intervalSeconds: Number(every.value) } : {}),
        };
        void run(`Now polling ${body.url}`, () => api('/api/feeds', { method: 'POST', body }));
      },
    },
    el('label', { for: 'feed-url', class: 'field' }, el('span', {}, 'Feed URL (RSS, Atom or JSON Feed)'), url),
    el('label', { for: 'feed-outlet', class: 'field' }, el('span', {}, 'Outlet name (optional)'), outlet),
    el('label', { for: 'feed-interval', class: 'field' }, el('span', {}, 'Seconds between polls'), every),
    el('button', { type: 'submit' }, 'Add feed'),
  );
  container.replaceChildren(
    wideView(
      'feed',
      'Feeds',
      `${plural(feeds.length, 'feed')} polled. Delay is the median time from an item's publication to its reading here, over the latest new items.`,
      status,
      feeds.length
        ? el(
            'table',
            { class: 'grid', id: 'feeds' },
            el('caption', { class: 'sr-only' }, 'Polled feeds and their health'),
            el(
              'thead',
              {},
              el(
                'tr',
                {},
                ['Feed', 'Health', 'Last poll', 'Delay', 'New items', 'Next poll', 'Actions'].map((h) => el('th', { scope: 'col' }, h)),
              ),
            ),
            el(
              'tbody',
              {},
              feeds.map((f) => {
                const [iconName, word] = HEALTH[f.health.status] ?? ['wait', f.health.status];
                return el(
                  'tr',
                  { 'data-id': f.id },
                  el(
                    'td',
                    {},
                    el('div', {}, f.outlet ?? '(outlet from the feed)'),
                    el('div', { class: 'meta url' }, f.url),
                    f.origin === 'config' ? el('div', { class: 'meta' }, 'from the configuration file') : null,
                  ),
                  el(
                    'td',
                    { class: `health health-${f.health.status}` },
                    icon(iconName),
                    ` ${word}`,
                    f.health.failures
                      ? el(
                          'div',
                          { class: 'meta' },
                          `${plural(f.health.failures, 'failed poll')} in a row${f.health.lastError ? `: ${f.health.lastError}` : ''}`,
                        )
                      : null,
                  ),
                  el(
                    'td',
                    {},
                    fmtTime(f.health.lastPollAt),
                    f.health.lastStatus ? el('div', { class: 'meta' }, `HTTP ${f.health.lastStatus}`) : null,
                  ),
                  el('td', {}, delay(f.health.medianDelaySeconds)),
                  el('td', {}, String(f.health.itemsNew)),
                  el('td', {}, f.paused ? '—' : fmtTime(f.health.nextPollAt)),
                  el(
                    'td',
                    { class: 'row-actions' },
                    el(
                      'button',
                      {
                        type: 'button',
                        class: 'small',
                        'aria-label': `${f.paused ? 'Resume' : 'Pause'} ${f.outlet ?? f.url}`,
                        onclick: () =>
                          void run(f.paused ? 'Resumed' : 'Paused', () =>
                            api(`/api/feeds/${f.id}`, { method: 'PATCH', body: { paused: !f.paused } }),
                          ),
                      },
                      f.paused ? 'Resume' : 'Pause',
                    ),
                    el(
                      'button',
                      {
                        type: 'button',
                        class: 'small danger',
                        'aria-label': `Remove ${f.outlet ?? f.url}`,
                        onclick: () => {
                          if (confirm(`Stop polling ${f.url}? Its stored articles stay.`))
                            void run('Removed (its stored articles stay)', () => api(`/api/feeds/${f.id}`, { method: 'DELETE' }));
                        },
                      },
                      'Remove',
                    ),
                  ),
                );
              }),
            ),
          )
        : el(
            'p',
            { class: 'hint' },
            'No feeds are polled. Add one below, list them under poll.feeds in the configuration, or push articles to the API.',
          ),
      el('h3', {}, 'Add a feed'),
      add,
    ),
  );
}
