/**
 * GET /api/stream: notifications as they happen, as Server-Sent Events (WHATWG HTML,
 * "Server-sent events": `id`, `event` and `data` fields, comment lines as heartbeats, a
 * `retry` hint). The events come from the store's notification log, not from this process's
 * memory, so every api process of a Redis deployment serves the same stream, and a client
 * that reconnects with Last-Event-ID (as EventSource does by itself) gets everything after
 * it that is still kept; when some of it was pruned meanwhile it is told so.
 */
import { StrandError } from '../../errors.js';
import { NOTIFICATION_TYPES } from '../../notify/notification-types.js';
import { type AlertRule, firstMatch, withRule } from '../../notify/alert-rules.js';
import type { Outbox, Subscriptions } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { errorSchema } from '../schemas.js';

/** What the stream reads, and how often (tests shorten the waits). */
export interface StreamDeps {
  store: Pick<Outbox, 'notificationsAfter'> & Pick<Subscriptions, 'listSubscriptions'>;
  /** How often the log is read for new notifications, ms. Default 100: an event reaches a client within about a tenth of a second of its commit, for one cheap read per client. */
  pollMs?: number;
  /** A comment line after this long without a write, ms, so proxies keep the connection. Default 15,000. */
  heartbeatMs?: number;
}

/** Notifications read from the log per round. */
const BATCH = 200;
/** What EventSource is asked to wait before reconnecting, ms. */
const RETRY_MS = 3000;

const streamSchema = {
  summary: 'Notifications as they happen (Server-Sent Events)',
  description: `A text/event-stream of the notifications webhooks carry, whether or not a subscriber asked for them: each event has \`id\` (its number in the notification log), \`event\` (its type) and \`data\` (the same JSON body a webhook receives). Without \`after\` or a Last-Event-ID header the stream starts with the next notification; with either, it first sends every kept notification after that number. When notifications after it were pruned already, a \`stream.gap\` event says from where the stream resumes. Comment lines keep the connection open. Links and groupings in the notifications are machine suggestions to verify.`,
  tags: ['events'],
  querystring: {
    type: 'object',
    properties: {
      types: { type: 'string', description: `Comma-separated notification types to send (default: all): ${NOTIFICATION_TYPES.join(', ')}` },
      subscription: {
        type: 'string',
        minLength: 1,
        maxLength: 100,
        description:
          "Send only what this subscription's alert rules select, each with the rule that matched (`rule` in the data), as its webhooks carry them.",
      },
      after: {
        type: 'integer',
        minimum: 0,
        description: 'Send the kept notifications after this number first (Last-Event-ID wins when both are given).',
      },
    },
    additionalProperties: false,
  },
  response: {
    200: {
      description: 'An event stream (text/event-stream) that stays open.',
      content: { 'text/event-stream': { schema: { type: 'string' } } },
    },
    400: errorSchema,
    404: errorSchema,
  },
} as const;

/** GET /api/stream */
export const streamRoute: RoutePlugin<StreamDeps> = async (app, deps) => {
  const pollMs = deps.pollMs ?? 100;
  const heartbeatMs = deps.heartbeatMs ?? 15_000;
  const open = new Set<() => void>();
  // Streams never end by themselves: the server ends them before it closes.
  app.addHook('preClose', async () => {
    for (const end of [...open]) end();
  });

  app.get('/api/stream', { schema: streamSchema }, async (req, reply) => {
    const types = wantedTypes(req.query.types);
    const rules = req.query.subscription === undefined ? null : await rulesOf(deps.store, req.query.subscription);
    const header = req.headers['last-event-id'];
    const resume = header === undefined ? req.query.after : lastEventId(header);
    let cursor = resume ?? (await deps.store.notificationsAfter(Number.MAX_SAFE_INTEGER, 0)).last;

    reply.hijack();
    const res = reply.raw;
    res.writeHead(200, {
      'content-type': 'text/event-stream; charset=utf-8',
      'cache-control': 'no-cache',
      connection: 'keep-alive',
      // Proxies that buffer responses (nginx) would hold the events back.
      'x-accel-buffering': 'no',
    });
    let lastWrite = Date.now();
    const write = (chunk: string): void => {
      res.write(chunk);
      lastWrite = Date.now();
    };
    write(`retry: ${RETRY_MS}\n\n`);

    let wake: () => void = () => undefined;
    let live = true;
    const end = (): void => {
      live = false;
      open.delete(end);
      wake();
      if (!res.writableEnded) res.end();
    };
    open.add(end);
    // The response closes when the client goes (or the server ends it).
    res.on('close', end);

    let gapChecked = resume === undefined;
    let unreachable = false;
    while (live) {
      let more = false;
      try {
        const log = await deps.store.notificationsAfter(cursor, BATCH);
        if (!gapChecked) {
          gapChecked = true;
          if (log.first !== null && log.first > cursor + 1 && cursor < log.last)
            write(`event: stream.gap\ndata: ${JSON.stringify({ after: cursor, resumesAt: log.first })}\n\n`);
        }
        for (const n of log.items) {
          if (!live) break;
          const rule = rules === null ? null : firstMatch(rules, n.type, n.body);
          if ((types === null || types.has(n.type)) && (rules === null || rule !== null))
            write(frame(n.seq, n.type, rule === null ? n.body : withRule(n.body, rule)));
          cursor = n.seq;
        }
        more = log.items.length === BATCH;
        unreachable = false;
      } catch (err) {
        // The store is away (Redis restarting): say so once, keep the connection, try again.
        if (!unreachable && live) write(`: the store cannot be reached just now; retrying\n\n`);
        unreachable = true;
        req.log.warn({ err }, 'stream read failed');
      }
      if (!live) break;
      if (Date.now() - lastWrite >= heartbeatMs) write(': heartbeat\n\n');
      if (!more) await new Promise<void>((r) => ((wake = r), setTimeout(r, pollMs).unref()));
    }
    end();
  });
};

/** One event: its number, its type and its body (a JSON body is one line, so one data field). */
function frame(seq: number, type: string, body: string): string {
  return `id: ${seq}\nevent: ${type}\ndata: ${body.replace(/\r?\n/g, '\ndata: ')}\n\n`;
}

async function rulesOf(store: Pick<Subscriptions, 'listSubscriptions'>, name: string): Promise<AlertRule[]> {
  const s = (await store.listSubscriptions()).find((x) => x.name === name);
  if (!s) throw new StrandError('STRAND_NOT_FOUND', `no subscription ${name}`);
  return s.rules;
}

function wantedTypes(param: string | undefined): Set<string> | null {
  if (param === undefined || param.trim() === '') return null;
  const asked = param
    .split(',')
    .map((t) => t.trim())
    .filter(Boolean);
  const unknown = asked.filter((t) => !(NOTIFICATION_TYPES as readonly string[]).includes(t));
  if (unknown.length)
    throw new StrandError(
      'STRAND_REQUEST_INVALID',
      `unknown notification type ${unknown.join(', ')}; known: ${NOTIFICATION_TYPES.join(', ')}`,
    );
  return new Set(asked);
}

function lastEventId(header: string | string[]): number {
  const v = Array.isArray(header) ? header[0]! : header;
  if (!/^\d{1,15}$/.test(v.trim()))
    throw new StrandError('STRAND_REQUEST_INVALID', `Last-Event-ID must be a notification number, not ${JSON.stringify(v.slice(0, 40))}`);
  return Number(v.trim());
}
