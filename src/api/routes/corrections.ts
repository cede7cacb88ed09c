/**
 * Analysts' corrections: merge two events, split sentences off into a new event, move
 * sentences to another event, detach one; each recorded in the audit log (who, when, what,
 * before and after) and undoable. They are made by the process that links (its memory and
 * the store change together), in its turn between articles.
 */
import { StrandError } from '../../errors.js';
import type { CorrectionAuthor, CorrectionRequest } from '../../link/corrections.js';
import type { CorrectionImage, CorrectionRecord, Corrections } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { errorSchema, evidenceSchema, int, nullableStr, num, str } from '../schemas.js';

/** Makes a correction in the linker's turn and answers its record. */
export type ApplyCorrection = (req: CorrectionRequest, author: CorrectionAuthor) => Promise<CorrectionRecord>;

const TAGS = ['corrections'];
const eventId = { type: 'string', pattern: '^ev_[0-9a-f]{16}$' } as const;
const eventOrStory = { type: 'string', pattern: '^(ev|st)_[0-9a-f]{16}$' } as const;
const sentenceRef = {
  type: 'object',
  additionalProperties: false,
  properties: { article: { type: 'string', minLength: 1, maxLength: 2048 }, sentence: { type: 'integer', minimum: 0, maximum: 100_000 } },
  required: ['article', 'sentence'],
} as const;
const sentenceOut = { type: 'object', properties: { article: str, sentence: int }, required: ['article', 'sentence'] } as const;
const note = { type: 'string', maxLength: 2000 } as const;

const summarySchema = {
  type: 'object',
  properties: {
    id: str,
    kind: { type: 'string', enum: ['merge', 'split', 'move', 'detach', 'merge-stories', 'split-story', 'threshold', 'undo'] },
    by: { ...str, description: 'The API key (or server token) that made it; local when the server checks no one.' },
    at: str,
    note: nullableStr,
    events: {
      type: 'array',
      items: str,
      description: 'The events (stories for merge-stories): for a merge [from, into]; otherwise [from, to].',
    },
    mentions: { type: 'array', items: sentenceOut },
    undoes: nullableStr,
    undoneBy: nullableStr,
    binds: {
      type: 'object',
      description: 'While it stands: events consolidation never merges again, sentences it never moves.',
      properties: {
        apart: { type: 'array', items: { type: 'array', items: str } },
        pinned: { type: 'array', items: sentenceOut },
      },
      required: ['apart', 'pinned'],
    },
    threshold: {
      type: 'object',
      description:
        'For a threshold adjustment (and its undo): the adjustment of the configured link threshold in effect before (`from`) and after (`to`), and the review round it was fitted to (null: set by hand).',
      properties: { from: num, to: num, round: nullableStr },
      required: ['from', 'to', 'round'],
    },
  },
  required: ['id', 'kind', 'by', 'at', 'note', 'events', 'mentions', 'undoes', 'undoneBy', 'binds'],
} as const;
const imageSchema = {
  type: 'object',
  properties: {
    events: {
      type: 'object',
      description: 'Each touched event as it stood (null: not stored), its label named by the sentence it came from.',
      additionalProperties: {
        type: ['object', 'null'],
        properties: {
          record: { type: 'object', additionalProperties: true },
          labelFrom: { anyOf: [sentenceOut, { type: 'null' }] },
          outlets: { type: 'array', items: { type: 'object', additionalProperties: true } },
        },
      },
    },
    links: {
      type: 'array',
      items: {
        type: 'object',
        properties: { article: str, sentence: int, eventId: str, score: { type: 'number' }, rank: int, evidence: evidenceSchema },
      },
    },
  },
} as const;
const detailSchema = {
  ...summarySchema,
  properties: { ...summarySchema.properties, before: imageSchema, after: imageSchema },
  required: [...summarySchema.required, 'before', 'after'],
} as const;

/** /api/corrections and below. */
export const correctionRoutes: RoutePlugin<{ store: Corrections; apply: ApplyCorrection | undefined }> = async (app, { store, apply }) => {
  const run = async (req: CorrectionRequest, author: CorrectionAuthor) => {
    if (!apply)
      throw new StrandError('STRAND_STOPPED', 'corrections are made by the process that links: send them to a server running --role all');
    return summary(await apply(req, author));
  };

  app.post(
    '/api/corrections',
    {
      schema: {
        summary: 'Correct the machine: merge two events, split sentences off, move them to another event, or detach one',
        description:
          'merge: `from` goes into `into`. split: the `mentions` leave `from` for a new event. move: the `mentions` leave `from` for `to`. detach: one mention leaves `from` for an event of its own. The correction is recorded with who made it, notified (event.corrected), and binds the linker: events it sets apart are never merged again by consolidation, and the sentences it places are never moved by it. Refused with 409 when it cannot be made as asked.',
        tags: TAGS,
        body: {
          type: 'object',
          additionalProperties: false,
          properties: {
            kind: { type: 'string', enum: ['merge', 'split', 'move', 'detach', 'merge-stories', 'split-story'] },
            from: eventOrStory,
            into: eventOrStory,
            to: eventId,
            mentions: { type: 'array', items: sentenceRef, minItems: 1, maxItems: 1000 },
            articles: {
              type: 'array',
              items: { type: 'string', minLength: 1, maxLength: 2048 },
              minItems: 1,
              maxItems: 1000,
              description: 'split-story: the articles that leave for a new story (the events they first reported go with them).',
            },
            note,
          },
          required: ['kind', 'from'],
        },
        response: { 200: summarySchema, 400: errorSchema, 404: errorSchema, 409: errorSchema, 503: errorSchema },
      },
    },
    async (req) => {
      const b = req.body;
      const mentions = (b.mentions ?? []).map((m) => ({ articleId: m.article, sentenceIndex: m.sentence }));
      const need = (what: string, v: unknown) => {
        if (v === undefined) throw new StrandError('STRAND_REQUEST_INVALID', `${b.kind} needs ${what}`);
      };
      const prefix = b.kind === 'merge-stories' || b.kind === 'split-story' ? 'st_' : 'ev_';
      for (const id of [b.from, b.into]) {
        if (id !== undefined && !id.startsWith(prefix))
          throw new StrandError('STRAND_REQUEST_INVALID', `${b.kind} takes ${prefix === 'st_' ? 'story' : 'event'} ids, not ${id}`);
      }
      let request: CorrectionRequest;
      if (b.kind === 'merge' || b.kind === 'merge-stories') {
        need('into', b.into);
        request = { kind: b.kind, from: b.from, into: b.into! };
      } else if (b.kind === 'split-story') {
        need('articles', b.articles);
        request = { kind: 'split-story', from: b.from, articles: b.articles! };
      } else {
        need('mentions', b.mentions);
        if (b.kind === 'move') need('to', b.to);
        request = b.kind === 'move' ? { kind: 'move', from: b.from, to: b.to!, mentions } : { kind: b.kind, from: b.from, mentions };
      }
      return run(request, { by: req.keyId ?? 'local', note: b.note ?? null });
    },
  );

  app.post(
    '/api/corrections/:id/undo',
    {
      schema: {
        summary: 'Undo a correction: its events and links as they were before it',
        description:
          'Refused with 409 when what it touched changed since (new sentences joined, consolidation changed the events): undoing would lose that. Undoing a merge keeps the two events apart from then on.',
        tags: TAGS,
        params: { type: 'object', properties: { id: { type: 'string', pattern: '^cr_[0-9a-f]{12}$' } }, required: ['id'] },
        body: { type: ['object', 'null'], additionalProperties: false, properties: { note } },
        response: { 200: summarySchema, 404: errorSchema, 409: errorSchema, 503: errorSchema },
      },
    },
    async (req) => run({ kind: 'undo', correction: req.params.id }, { by: req.keyId ?? 'local', note: req.body?.note ?? null }),
  );

  app.get(
    '/api/corrections',
    {
      schema: {
        summary: 'The audit log of corrections, newest first',
        tags: TAGS,
        querystring: {
          type: 'object',
          additionalProperties: false,
          properties: {
            limit: { type: 'integer', minimum: 1, maximum: 500, default: 100 },
            offset: { type: 'integer', minimum: 0, default: 0 },
          },
        },
        response: {
          200: {
            type: 'object',
            properties: { total: int, corrections: { type: 'array', items: summarySchema } },
            required: ['total', 'corrections'],
          },
        },
      },
    },
    async (req) => {
      const page = await store.listCorrections(req.query.limit, req.query.offset);
      return { total: page.total, corrections: page.corrections.map(summary) };
    },
  );

  app.get(
    '/api/corrections/:id',
    {
      schema: {
        summary: 'One correction with the events and links as they were before it and after it',
        tags: TAGS,
        params: { type: 'object', properties: { id: { type: 'string', pattern: '^cr_[0-9a-f]{12}$' } }, required: ['id'] },
        response: { 200: detailSchema, 404: errorSchema },
      },
    },
    async (req) => {
      const c = await store.getCorrection(req.params.id);
      if (!c) throw new StrandError('STRAND_NOT_FOUND', `no correction ${req.params.id}`);
      return { ...summary(c), before: imageView(c.before), after: imageView(c.after) };
    },
  );
};

function summary(c: CorrectionRecord): object {
  const ref = (k: { articleId: string; sentenceIndex: number }) => ({ article: k.articleId, sentence: k.sentenceIndex });
  return {
    id: c.id,
    kind: c.kind,
    by: c.by,
    at: c.at,
    note: c.note,
    events: c.events,
    mentions: c.mentions.map(ref),
    undoes: c.undoes,
    undoneBy: c.undoneBy,
    binds: { apart: c.binds.apart, pinned: c.binds.pinned.map(ref) },
    ...(c.threshold ? { threshold: { from: c.threshold.from, to: c.threshold.to, round: c.threshold.round } } : {}),
  };
}

/** An image without the linker's state (internal bytes). */
function imageView(img: CorrectionImage): object {
  return {
    events: Object.fromEntries(
      Object.entries(img.events).map(([id, e]) => [
        id,
        e && {
          record: e.record,
          labelFrom: e.labelFrom && { article: e.labelFrom.articleId, sentence: e.labelFrom.sentenceIndex },
          outlets: e.outlets,
        },
      ]),
    ),
    links: img.links.map((l) => ({
      article: l.articleId,
      sentence: l.sentenceIndex,
      eventId: l.eventId,
      score: l.score,
      rank: l.rank,
      evidence: l.evidence,
    })),
  };
}
