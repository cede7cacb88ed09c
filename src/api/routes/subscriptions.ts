/**
 * Webhook subscriptions and their alert rules: list, make, change (pause, resume, target,
 * rules), delete, rotate the secret, read the delivery log, replay dead letters. A
 * subscription listed in the configuration file can be paused and resumed here; its target,
 * rules and secret are the configuration's (kept in line with it at each start).
 */
import type { Config } from '../../config/schema.js';
import { StrandError } from '../../errors.js';
import { NetworkGuard, WEBHOOK_NAMES } from '../../ingest/network-guard.js';
import { type AlertRule, ruleWithDefaults, EVERYTHING } from '../../notify/alert-rules.js';
import { NOTIFICATION_TYPES } from '../../notify/notification-types.js';
import { newSecret, subscriptionView } from '../../notify/subscriptions.js';
import type { Outbox, Subscription, Subscriptions } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { errorSchema, int, nullableStr, str } from '../schemas.js';

const NAME = '^[A-Za-z0-9][A-Za-z0-9._-]{0,99}$';
const names = { type: 'array', items: { type: 'string', minLength: 1, maxLength: 200 }, maxItems: 64 } as const;

/** One alert rule, as posted and as shown. */
const ruleSchema = {
  type: 'object',
  additionalProperties: false,
  description:
    'Selects notifications: all conditions given must hold. A subscription tries its rules in order; the first that selects a notification is named in the delivery (`rule` in the body).',
  properties: {
    name: { type: 'string', minLength: 1, maxLength: 100 },
    types: {
      type: 'array',
      items: { type: 'string', enum: [...NOTIFICATION_TYPES] },
      description: 'Notification types selected; empty or absent: all.',
    },
    words: {
      ...names,
      maxItems: 16,
      description: "Words that must all appear in the event's or story's label, the sentence or the headline.",
    },
    participants: { ...names, description: "At least one must be among the event's participants or the story's names." },
    places: { ...names, description: "At least one must be among the event's places or the story's names." },
    outlets: { ...names, description: 'Only reports by these outlets.' },
    independentOnly: { type: 'boolean', description: 'Leave out first reports that are copies of another outlet’s article.' },
    minOutlets: {
      type: ['integer', 'null'],
      minimum: 2,
      maximum: 10_000,
      description:
        'Select an event at the independent report that brings it to this many independent outlets (an event.outlet_added; copies not counted), once per event.',
    },
    minMentions: {
      type: ['integer', 'null'],
      minimum: 2,
      maximum: 1_000_000,
      description: 'Select an event at the article that brings it to this many mentions (an article.linked), once per event.',
    },
    withinHours: {
      type: ['number', 'null'],
      minimum: 1,
      maximum: 8784,
      description: "With minOutlets or minMentions: only when that report came within this many hours of the event's first.",
    },
  },
  required: ['name'],
} as const;

const subscriptionSchema = {
  type: 'object',
  properties: {
    name: str,
    url: str,
    rules: { type: 'array', items: ruleSchema },
    paused: { type: 'boolean', description: 'Nothing is queued or sent while paused; what came meanwhile is delivered on resuming.' },
    origin: { type: 'string', enum: ['config', 'api'], description: 'config: listed in the configuration file; api: made here.' },
    created: str,
    previousSecretUntil: { ...nullableStr, description: 'After a rotation, the old secret signs beside the new one until then.' },
  },
  required: ['name', 'url', 'rules', 'paused', 'origin', 'created', 'previousSecretUntil'],
} as const;
const withSecret = {
  ...subscriptionSchema,
  properties: {
    ...subscriptionSchema.properties,
    secret: { ...str, description: 'The Standard Webhooks secret (whsec_...). Shown only here: keep it.' },
  },
  required: [...subscriptionSchema.required, 'secret'],
} as const;
const nameParams = { type: 'object', properties: { name: { type: 'string', minLength: 1, maxLength: 100 } }, required: ['name'] } as const;
const rulesBody = { type: 'array', items: ruleSchema, minItems: 1, maxItems: 32 } as const;
const TAGS = ['subscriptions'];

const deliverySchema = {
  type: 'object',
  properties: {
    messageId: { ...str, description: 'The webhook-id: the same across retries and replays.' },
    type: str,
    created: str,
    rule: nullableStr,
    status: { type: 'string', enum: ['pending', 'delivered', 'dead'] },
    attempts: int,
    nextAt: { ...str, description: 'When it is due (pending) or when it settled.' },
    lastError: nullableStr,
    latencyMs: { type: ['integer', 'null'], description: 'How long the last attempt took.' },
  },
  required: ['messageId', 'type', 'created', 'rule', 'status', 'attempts', 'nextAt', 'lastError', 'latencyMs'],
} as const;

/** What the routes need: the store's subscriptions and log, the delivery policy, a clock. */
export interface SubscriptionDeps {
  store: Subscriptions & Pick<Outbox, 'notificationsAfter'>;
  webhooks: Pick<Config['webhooks'], 'allowPrivateNetworks' | 'allowedNetworks'>;
  now: () => Date;
}

/** /api/subscriptions and below. */
export const subscriptionRoutes: RoutePlugin<SubscriptionDeps> = async (app, { store, webhooks, now }) => {
  const guard = new NetworkGuard(webhooks, WEBHOOK_NAMES);
  const target = (url: string): string => {
    let parsed: URL;
    try {
      parsed = new URL(url);
    } catch {
      throw new StrandError('STRAND_REQUEST_INVALID', `url is not a URL: ${url.slice(0, 100)}`);
    }
    if (parsed.protocol !== 'http:' && parsed.protocol !== 'https:')
      throw new StrandError('STRAND_REQUEST_INVALID', 'url must be http or https');
    // Literal addresses are judged now; names again at every delivery (DNS answers change).
    guard.checkUrl(parsed);
    return parsed.href;
  };
  const rules = (given: readonly Partial<AlertRule>[] | undefined): AlertRule[] => {
    if (!given) return [EVERYTHING];
    const out = given.map((r) => ruleWithDefaults(r as AlertRule));
    if (new Set(out.map((r) => r.name)).size !== out.length) throw new StrandError('STRAND_REQUEST_INVALID', 'rule names must differ');
    for (const r of out) {
      if (r.withinHours !== null && r.minOutlets === null && r.minMentions === null)
        throw new StrandError('STRAND_REQUEST_INVALID', `rule ${r.name}: withinHours needs minOutlets or minMentions`);
      if (r.minOutlets !== null && r.minMentions !== null)
        throw new StrandError('STRAND_REQUEST_INVALID', `rule ${r.name}: a rule counts outlets or mentions, not both (make two rules)`);
    }
    return out;
  };
  const find = async (name: string): Promise<Subscription & { cursor: number }> => {
    const s = (await store.listSubscriptions()).find((x) => x.name === name);
    if (!s) throw new StrandError('STRAND_NOT_FOUND', `no subscription ${name}`);
    return s;
  };
  const apiOnly = (s: Subscription, what: string): void => {
    if (s.origin === 'config')
      throw new StrandError(
        'STRAND_SUBSCRIPTION_CONFLICT',
        `${s.name} is listed in the configuration file: ${what} there (pausing works here)`,
      );
  };

  app.get(
    '/api/subscriptions',
    {
      schema: {
        summary: 'The webhook subscriptions and their alert rules (never their secrets)',
        tags: TAGS,
        response: {
          200: { type: 'object', properties: { subscriptions: { type: 'array', items: subscriptionSchema } }, required: ['subscriptions'] },
        },
      },
    },
    async () => ({ subscriptions: (await store.listSubscriptions()).map(subscriptionView) }),
  );

  app.post(
    '/api/subscriptions',
    {
      schema: {
        summary: 'Make a subscription: signed POSTs of the notifications its rules select, from now on',
        description:
          'The answer carries the secret (generated unless given), once. Refused with 409 when the name is taken, with 403 when the URL names a loopback, private or link-local address (unless webhooks.allowPrivateNetworks); names are judged again at every delivery.',
        tags: TAGS,
        body: {
          type: 'object',
          additionalProperties: false,
          properties: {
            name: { type: 'string', pattern: NAME },
            url: { type: 'string', minLength: 1, maxLength: 2048 },
            secret: { type: 'string', pattern: '^whsec_[A-Za-z0-9+/]{32,88}={0,2}$' },
            rules: rulesBody,
            paused: { type: 'boolean' },
          },
          required: ['name', 'url'],
        },
        response: { 201: withSecret, 400: errorSchema, 403: errorSchema, 409: errorSchema },
      },
    },
    async (req, reply) => {
      const b = req.body;
      const s: Subscription = {
        name: b.name,
        url: target(b.url),
        secret: b.secret ?? newSecret(),
        previous: null,
        rules: rules(b.rules),
        paused: b.paused ?? false,
        origin: 'api',
        created: now().toISOString(),
      };
      // From now on: its place is the end of the log as it stands.
      const { last } = await store.notificationsAfter(0, 1);
      if (!(await store.addSubscription(s, last)))
        throw new StrandError('STRAND_SUBSCRIPTION_CONFLICT', `a subscription named ${b.name} exists`);
      return reply
        .code(201)
        .header('location', `/api/subscriptions/${encodeURIComponent(s.name)}`)
        .send({ ...subscriptionView(s), secret: s.secret });
    },
  );

  app.get(
    '/api/subscriptions/:name',
    { schema: { summary: 'One subscription', tags: TAGS, params: nameParams, response: { 200: subscriptionSchema, 404: errorSchema } } },
    async (req) => subscriptionView(await find(req.params.name)),
  );

  app.patch(
    '/api/subscriptions/:name',
    {
      schema: {
        summary: 'Pause or resume a subscription, or change its target or rules',
        tags: TAGS,
        params: nameParams,
        body: {
          type: 'object',
          additionalProperties: false,
          minProperties: 1,
          properties: { paused: { type: 'boolean' }, url: { type: 'string', minLength: 1, maxLength: 2048 }, rules: rulesBody },
        },
        response: { 200: subscriptionSchema, 400: errorSchema, 403: errorSchema, 404: errorSchema, 409: errorSchema },
      },
    },
    async (req) => {
      const have = await find(req.params.name);
      const b = req.body;
      if (b.url !== undefined || b.rules !== undefined) apiOnly(have, 'change its target and rules');
      const url = b.url === undefined ? undefined : target(b.url);
      const given = b.rules === undefined ? undefined : rules(b.rules);
      const next = await store.updateSubscription(req.params.name, (s) => ({
        ...s,
        ...(b.paused === undefined ? {} : { paused: b.paused }),
        ...(url === undefined ? {} : { url }),
        ...(given === undefined ? {} : { rules: given }),
      }));
      if (!next) throw new StrandError('STRAND_NOT_FOUND', `no subscription ${req.params.name}`);
      return subscriptionView(next);
    },
  );

  app.delete(
    '/api/subscriptions/:name',
    {
      schema: {
        summary: 'Delete a subscription (its pending deliveries are given up)',
        tags: TAGS,
        params: nameParams,
        response: { 204: { type: 'null' }, 404: errorSchema, 409: errorSchema },
      },
    },
    async (req, reply) => {
      apiOnly(await find(req.params.name), 'remove it');
      if (!(await store.deleteSubscription(req.params.name)))
        throw new StrandError('STRAND_NOT_FOUND', `no subscription ${req.params.name}`);
      return reply.code(204).send();
    },
  );

  app.post(
    '/api/subscriptions/:name/rotate-secret',
    {
      schema: {
        summary: 'Give a subscription a new secret; the old one keeps signing beside it for a grace period',
        description:
          'During the grace period every delivery carries two signatures (webhook-signature "v1,<new> v1,<old>"), which the Standard Webhooks specification lets receivers verify with either secret, so a receiver can switch at its own pace.',
        tags: TAGS,
        params: nameParams,
        body: {
          type: ['object', 'null'],
          additionalProperties: false,
          properties: { graceHours: { type: 'number', minimum: 0, maximum: 720, description: 'Default 24.' } },
        },
        response: {
          200: { type: 'object', properties: { secret: str, previousSecretUntil: str }, required: ['secret', 'previousSecretUntil'] },
          404: errorSchema,
          409: errorSchema,
        },
      },
    },
    async (req) => {
      apiOnly(await find(req.params.name), 'change its secret');
      const secret = newSecret();
      const until = new Date(now().getTime() + (req.body?.graceHours ?? 24) * 3_600_000).toISOString();
      const next = await store.updateSubscription(req.params.name, (s) => ({ ...s, secret, previous: { secret: s.secret, until } }));
      if (!next) throw new StrandError('STRAND_NOT_FOUND', `no subscription ${req.params.name}`);
      return { secret, previousSecretUntil: until };
    },
  );

  app.get(
    '/api/subscriptions/:name/deliveries',
    {
      schema: {
        summary: "A subscription's delivery log: each notification sent or to send, its attempts, status and latency, newest first",
        tags: TAGS,
        params: nameParams,
        querystring: {
          type: 'object',
          additionalProperties: false,
          properties: {
            limit: { type: 'integer', minimum: 1, maximum: 500, default: 100 },
            status: { type: 'string', enum: ['pending', 'delivered', 'dead'] },
          },
        },
        response: {
          200: { type: 'object', properties: { deliveries: { type: 'array', items: deliverySchema } }, required: ['deliveries'] },
          404: errorSchema,
        },
      },
    },
    async (req) => {
      await find(req.params.name);
      return { deliveries: await store.subscriptionDeliveries(req.params.name, req.query.limit, req.query.status) };
    },
  );

  app.post(
    '/api/subscriptions/:name/dead-letters/replay',
    {
      schema: {
        summary: "Send a subscription's dead letters again (same webhook-id, so receivers can drop what they already have)",
        tags: TAGS,
        params: nameParams,
        response: { 200: { type: 'object', properties: { replayed: int }, required: ['replayed'] }, 404: errorSchema },
      },
    },
    async (req) => {
      await find(req.params.name);
      return { replayed: await store.replayDeadLetters(req.params.name, now().toISOString()) };
    },
  );
};
