// Alerts: the webhook subscriptions, their rules, and each one's delivery log.
import { api, explain } from './api.js';
import { el, fmtTime, icon, problem, statusLine, wideView } from './dom.js';

/** A rule in words. */
function ruleText(r) {
  const parts = [];
  if (r.types?.length) parts.push(r.types.join(', '));
  if (r.words?.length) parts.push(`words: ${r.words.join(', ')}`);
  if (r.participants?.length) parts.push(`participants: ${r.participants.join(', ')}`);
  if (r.places?.length) parts.push(`places: ${r.places.join(', ')}`);
  if (r.outlets?.length) parts.push(`outlets: ${r.outlets.join(', ')}`);
  if (r.independentOnly) parts.push('independent reports only');
  if (r.minOutlets) parts.push(`reaches ${r.minOutlets} independent outlets`);
  if (r.minMentions) parts.push(`reaches ${r.minMentions} mentions`);
  if (r.withinHours) parts.push(`within ${r.withinHours} h`);
  return `${r.name ? `${r.name}: ` : ''}${parts.join(' · ') || 'everything'}`;
}

async function renderDeliveries(name, target, status) {
  try {
    const { deliveries } = await api(`/api/subscriptions/${encodeURIComponent(name)}/deliveries?limit=100`);
    target.replaceChildren(
      el('h3', { id: 'deliveries-title' }, `Delivery log of ${name}`),
      deliveries.length
        ? el(
            'table',
            { class: 'grid', id: 'deliveries', 'aria-labelledby': 'deliveries-title' },
            el(
              'thead',
              {},
              el(
                'tr',
                {},
                ['Notification', 'Rule', 'Status', 'Attempts', 'Latency', 'Created', 'Last error'].map((h) =>
                  el('th', { scope: 'col' }, h),
                ),
              ),
            ),
            el(
              'tbody',
              {},
              deliveries.map((d) =>
                el(
                  'tr',
                  {},
                  el('td', {}, d.type, el('div', { class: 'meta url' }, d.messageId)),
                  el('td', {}, d.rule ?? '—'),
                  el(
                    'td',
                    { class: `delivery-${d.status}` },
                    icon(d.status === 'delivered' ? 'ok' : d.status === 'dead' ? 'fail' : 'wait'),
                    ` ${d.status}`,
                  ),
                  el('td', {}, String(d.attempts)),
                  el('td', {}, d.latencyMs === null ? '—' : `${d.latencyMs} ms`),
                  el('td', {}, fmtTime(d.created)),
                  el('td', {}, d.lastError ?? ''),
                ),
              ),
            ),
          )
        : el('p', { class: 'hint' }, 'Nothing sent to it yet.'),
    );
  } catch (err) {
    status.replaceChildren(problem(explain(err, 'Subscriptions are shown to')));
  }
}

export async function renderAlerts(container) {
  const status = statusLine();
  const log = el('div', { class: 'delivery-log' });
  const view = (...children) =>
    wideView(
      'bell',
      'Alerts',
      'Subscriptions receive signed webhooks for the notifications their rules select. They are made through the API (POST /api/subscriptions) or the configuration; here they can be paused and their deliveries read.',
      ...children,
    );
  let subscriptions;
  try {
    ({ subscriptions } = await api('/api/subscriptions'));
  } catch (err) {
    container.replaceChildren(view(problem(explain(err, 'Subscriptions are shown to'))));
    return;
  }
  const toggle = async (s) => {
    try {
      await api(`/api/subscriptions/${encodeURIComponent(s.name)}`, { method: 'PATCH', body: { paused: !s.paused } });
      await renderAlerts(container);
    } catch (err) {
      status.replaceChildren(problem(explain(err, 'Subscriptions are shown to')));
    }
  };
  container.replaceChildren(
    view(
      status,
      subscriptions.length
        ? el(
            'table',
            { class: 'grid', id: 'subscriptions' },
            el('caption', { class: 'sr-only' }, 'Webhook subscriptions'),
            el(
              'thead',
              {},
              el(
                'tr',
                {},
                ['Subscription', 'Rules', 'State', 'Actions'].map((h) => el('th', { scope: 'col' }, h)),
              ),
            ),
            el(
              'tbody',
              {},
              subscriptions.map((s) =>
                el(
                  'tr',
                  {},
                  el('td', {}, s.name, el('div', { class: 'meta url' }, s.url)),
                  el(
                    'td',
                    {},
                    el(
                      'ul',
                      { class: 'plain' },
                      s.rules.map((r) => el('li', {}, ruleText(r))),
                    ),
                  ),
                  el(
                    'td',
                    {},
                    s.paused ? [icon('pause'), ' paused'] : [icon('ok'), ' active'],
                    s.origin === 'config' ? el('div', { class: 'meta' }, 'from the configuration file') : null,
                  ),
                  el(
                    'td',
                    { class: 'row-actions' },
                    el(
                      'button',
                      { type: 'button', class: 'small', onclick: () => void renderDeliveries(s.name, log, status) },
                      'Delivery log',
                      el('span', { class: 'sr-only' }, ` of ${s.name}`),
                    ),
                    el(
                      'button',
                      { type: 'button', class: 'small', onclick: () => void toggle(s) },
                      s.paused ? 'Resume' : 'Pause',
                      el('span', { class: 'sr-only' }, ` ${s.name}`),
                    ),
                  ),
                ),
              ),
            ),
          )
        : el('p', { class: 'hint' }, 'No subscriptions yet.'),
      log,
    ),
  );
}
