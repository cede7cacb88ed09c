/**
 * Subscriptions as the dispatcher and the API handle them: made from the configuration's
 * subscribers (kept in line with it at each start) or through the API, their secrets
 * (new ones, and the old one kept for a grace period after a rotation), and the view the
 * API gives (never the secret).
 */
import { randomBytes } from 'node:crypto';
import type { Subscriber } from '../config/schema.js';
import type { Logger } from '../logger.js';
import type { Subscription, Subscriptions } from '../store/store.js';
import { type AlertRule, ruleWithDefaults } from './alert-rules.js';

/** A new Standard Webhooks secret: `whsec_` and 32 random bytes in base64. */
export function newSecret(): string {
  return `whsec_${randomBytes(32).toString('base64')}`;
}

/** The secrets that sign a delivery at `now`: the current one, and the previous one during its grace period. */
export function signingSecrets(s: Subscription, now: Date): string[] {
  return s.previous && Date.parse(s.previous.until) > now.getTime() ? [s.secret, s.previous.secret] : [s.secret];
}

/** A configured subscriber as a subscription: its rules, or one rule selecting its `types`. */
export function fromConfig(c: Subscriber, created: string): Subscription {
  const rules: AlertRule[] = c.rules?.map(ruleWithDefaults) ?? [ruleWithDefaults({ name: 'configured types', types: c.types })];
  return { name: c.name, url: c.url, secret: c.secret, previous: null, rules, paused: false, origin: 'config', created };
}

/**
 * Brings the stored subscriptions in line with the configuration: each configured one is
 * written (keeping whether it is paused and its place in the log; a new one receives the
 * whole log still kept), and a configured one no longer listed is removed. Subscriptions
 * made through the API stay, unless the configuration now names one of them.
 */
export async function syncConfigSubscriptions(
  store: Pick<Subscriptions, 'listSubscriptions' | 'putSubscription' | 'deleteSubscription'>,
  configured: readonly Subscriber[],
  now: Date,
  log: Pick<Logger, 'info'>,
): Promise<void> {
  const stored = new Map((await store.listSubscriptions()).map((s) => [s.name, s]));
  for (const c of configured) {
    const have = stored.get(c.name);
    if (have?.origin === 'api')
      log.info({ subscription: c.name }, 'a configured subscriber replaces the subscription of that name made through the API');
    const next = fromConfig(c, have?.created ?? now.toISOString());
    await store.putSubscription({ ...next, paused: have?.paused ?? false }, 0);
  }
  const listed = new Set(configured.map((c) => c.name));
  for (const s of stored.values()) if (s.origin === 'config' && !listed.has(s.name)) await store.deleteSubscription(s.name);
}

/** A subscription as the API shows it: everything but its secrets. */
export function subscriptionView(s: Subscription & { cursor?: number }): object {
  return {
    name: s.name,
    url: s.url,
    rules: s.rules,
    paused: s.paused,
    origin: s.origin,
    created: s.created,
    previousSecretUntil: s.previous?.until ?? null,
  };
}
