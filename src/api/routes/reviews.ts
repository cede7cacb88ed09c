/**
 * Review rounds: draw one from the linker's decisions, hand reviewers the next item with
 * what they need to judge it, record their answers, and report what the answers say.
 * Every route needs the manage scope (answers carry reviewers' names).
 */
import { StrandError } from '../../errors.js';
import { drawRound, liveDecisions, nanAsNull, nextItem, roundReport, roundVerdicts } from '../../review/rounds.js';
import type { CorrectionRequest } from '../../link/corrections.js';
import type { ApplyCorrection } from './corrections.js';
import { STRATA } from '../../review/sampling.js';
import type { EventQueries, ReviewRound, Reviews } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { CAUTION, dayOrTime, errorSchema, evidenceSchema, int, nullableStr, num, str } from '../schemas.js';

const TAGS = ['reviews'];
const roundId = { type: 'string', pattern: '^rv_[0-9a-f]{12}$' } as const;
const params = { type: 'object', properties: { id: roundId }, required: ['id'] } as const;
const reviewer = { type: 'string', minLength: 1, maxLength: 100, pattern: '^[^\\u0000-\\u001f\\u007f]+$' } as const;
const roundSchema = {
  type: 'object',
  properties: {
    id: str,
    created: str,
    by: str,
    margin: num,
    seed: int,
    reviewersPerItem: int,
    items: int,
    design: {
      type: 'array',
      description: 'Each stratum: how many decisions it holds and how many were drawn (an answer stands for population / sampled of them).',
      items: {
        type: 'object',
        properties: { stratum: { type: 'string', enum: [...STRATA] }, population: int, sampled: int },
        required: ['stratum', 'population', 'sampled'],
      },
    },
  },
  required: ['id', 'created', 'by', 'margin', 'seed', 'reviewersPerItem', 'items', 'design'],
} as const;
const nullableNum = { type: ['number', 'null'] } as const;
const estimate = {
  type: 'object',
  description: 'null where the answers cannot tell yet (no answers in a stratum the estimate needs).',
  properties: { value: nullableNum, low: nullableNum, high: nullableNum, answers: int },
  required: ['value', 'low', 'high', 'answers'],
} as const;
const quality = {
  type: 'object',
  properties: {
    precision: estimate,
    recall: estimate,
    merges: { ...estimate, description: "The share of consolidation's merges reviewers found right (null when the round holds none)." },
    backReferences: {
      ...estimate,
      description:
        'The share of back-references (links made because the sentence points back at a happening its article told before, evidence.refersBack) reviewers found right; null when the round holds none.',
    },
  },
  required: ['precision', 'recall', 'merges', 'backReferences'],
} as const;

const summary = (r: ReviewRound | Omit<ReviewRound, 'items'>, items: number) => {
  const { id, created, by, margin, seed, reviewersPerItem, design } = r;
  return { id, created, by, margin, seed, reviewersPerItem, items, design };
};

/** /api/reviews and below. */
export const reviewRoutes: RoutePlugin<{ store: EventQueries & Reviews; now: () => Date; apply: ApplyCorrection | undefined }> = async (
  app,
  { store, now, apply },
) => {
  const find = async (id: string): Promise<ReviewRound> => {
    const r = await store.getReviewRound(id);
    if (!r) throw new StrandError('STRAND_NOT_FOUND', `no review round ${id}`);
    return r;
  };

  app.post(
    '/api/reviews',
    {
      schema: {
        summary: "Draw a review round from the linker's decisions",
        description:
          'The decisions about sentences of events active in the window (from, to; at most maxEvents events, most recent first): links, and misses with their nearest event. Consolidation’s merges into those events count too, each asked about through the sentence that opened the absorbed event. They fall into strata (near-bar, confident, cross-story and conflicting-names links; near and far misses; merges; back-references); each stratum gets the same share of `size` (what a small one lacks goes to the others), so that the answers estimate precision and recall without bias. Each item wants `reviewersPerItem` answers.',
        tags: TAGS,
        body: {
          type: 'object',
          additionalProperties: false,
          properties: {
            size: { type: 'integer', minimum: 1, maximum: 5000, default: 200 },
            reviewersPerItem: { type: 'integer', minimum: 1, maximum: 15, default: 5 },
            margin: { type: 'number', minimum: 0.01, maximum: 0.5, default: 0.1 },
            seed: { type: 'integer', minimum: 0, maximum: 2 ** 31 - 1 },
            from: dayOrTime,
            to: dayOrTime,
            maxEvents: { type: 'integer', minimum: 1, maximum: 100_000, default: 5000 },
          },
        },
        response: { 201: roundSchema, 400: errorSchema, 409: errorSchema },
      },
    },
    async (req, reply) => {
      const b = req.body as {
        size: number;
        reviewersPerItem: number;
        margin: number;
        seed?: number;
        from?: string;
        to?: string;
        maxEvents: number;
      };
      const decisions = await liveDecisions(store, { from: b.from, to: b.to, maxEvents: b.maxEvents });
      if (decisions.length === 0) throw new StrandError('STRAND_REVIEW_EMPTY', 'no linking decisions to review in that window');
      const round = drawRound(decisions, {
        size: b.size,
        reviewersPerItem: b.reviewersPerItem,
        margin: b.margin,
        seed: b.seed ?? Math.floor(Math.random() * 2 ** 31),
        by: req.keyId ?? 'local',
        now: now(),
      });
      await store.addReviewRound(round);
      return reply.code(201).header('location', `/api/reviews/${round.id}`).send(summary(round, round.items.length));
    },
  );

  app.get(
    '/api/reviews',
    {
      schema: {
        summary: 'The review rounds, newest first',
        tags: TAGS,
        response: { 200: { type: 'object', properties: { rounds: { type: 'array', items: roundSchema } }, required: ['rounds'] } },
      },
    },
    async () => {
      const rounds = await store.listReviewRounds();
      return { rounds: await Promise.all(rounds.map(async (r) => summary(r, (await store.getReviewRound(r.id))?.items.length ?? 0))) };
    },
  );

  app.get(
    '/api/reviews/:id/next',
    {
      schema: {
        summary: "A reviewer's next item: a sentence and an event, with the evidence, to judge as the same event or not",
        description: 'Answers 204 when this reviewer has answered every item that still wants answers.',
        tags: TAGS,
        params,
        querystring: { type: 'object', additionalProperties: false, properties: { reviewer }, required: ['reviewer'] },
        response: {
          200: {
            type: 'object',
            properties: {
              item: int,
              stratum: { type: 'string', enum: [...STRATA] },
              question: str,
              linked: {
                type: 'boolean',
                description: 'true: the linker linked them; false: it did not (the event was the nearest it had).',
              },
              mergedFrom: {
                ...nullableStr,
                description: "For a merge: the event the sentence opened, which consolidation merged into this one (score: the merge's).",
              },
              score: num,
              bar: num,
              sentence: {
                type: 'object',
                properties: {
                  article: str,
                  index: int,
                  text: nullableStr,
                  title: str,
                  outlet: str,
                  published: nullableStr,
                  url: nullableStr,
                },
                required: ['article', 'index', 'text', 'title', 'outlet', 'published', 'url'],
              },
              event: {
                type: 'object',
                properties: { id: str, label: str, examples: { type: 'array', items: str } },
                required: ['id', 'label', 'examples'],
              },
              evidence: { anyOf: [evidenceSchema, { type: 'null' }] },
              caution: str,
            },
            required: ['item', 'stratum', 'question', 'linked', 'mergedFrom', 'score', 'bar', 'sentence', 'event', 'evidence', 'caution'],
          },
          204: { type: 'null', description: 'Nothing left for this reviewer.' },
          404: errorSchema,
        },
      },
    },
    async (req, reply) => {
      const round = await find(req.params.id);
      const item = nextItem(round, await store.reviewAnswers(round.id), req.query.reviewer);
      if (!item) return reply.code(204).send();
      const article = await store.getArticle(item.articleId);
      const s = article?.sentences.find((x) => x.index === item.sentenceIndex);
      const linkEvidence = s?.links.find((l) => (item.linked ? l.eventId === item.eventId : l.evidence.opened))?.evidence ?? null;
      let eventId = item.eventId;
      let event = await store.getEvent(eventId);
      if (!event) {
        const into = await store.mergedInto(eventId);
        if (into) event = await store.getEvent((eventId = into));
      }
      return {
        item: item.item,
        stratum: item.stratum,
        question: 'Does this sentence report the same happening as this event?',
        linked: item.linked,
        mergedFrom: item.mergedFrom ?? null,
        score: item.score,
        bar: item.bar,
        sentence: {
          article: item.articleId,
          index: item.sentenceIndex,
          text: s?.text || null,
          title: article?.article.title ?? '',
          outlet: item.outlet,
          published: article?.article.published ?? null,
          url: article?.article.url ?? null,
        },
        event: {
          id: eventId,
          label: event?.event.label ?? '(no longer stored)',
          examples: (event?.mentions ?? [])
            .filter((m) => !(m.articleId === item.articleId && m.sentenceIndex === item.sentenceIndex) && m.text)
            .slice(0, 3)
            .map((m) => m.text!),
        },
        evidence: linkEvidence,
        caution: CAUTION,
      };
    },
  );

  app.post(
    '/api/reviews/:id/answers',
    {
      schema: {
        summary: "Record a reviewer's answer about an item (a later answer by the same reviewer replaces it)",
        tags: TAGS,
        params,
        body: {
          type: 'object',
          additionalProperties: false,
          properties: {
            item: { type: 'integer', minimum: 0, maximum: 100_000 },
            reviewer,
            verdict: { type: 'string', enum: ['same', 'different', 'unsure'] },
          },
          required: ['item', 'reviewer', 'verdict'],
        },
        response: {
          200: {
            type: 'object',
            properties: { round: str, item: int, reviewer: str, verdict: str, at: str },
            required: ['round', 'item', 'reviewer', 'verdict', 'at'],
          },
          400: errorSchema,
          404: errorSchema,
        },
      },
    },
    async (req) => {
      const round = await find(req.params.id);
      const b = req.body as { item: number; reviewer: string; verdict: 'same' | 'different' | 'unsure' };
      if (!round.items.some((i) => i.item === b.item)) throw new StrandError('STRAND_NOT_FOUND', `round ${round.id} has no item ${b.item}`);
      const answer = { round: round.id, item: b.item, reviewer: b.reviewer, verdict: b.verdict, at: now().toISOString() };
      await store.putReviewAnswer(answer);
      return answer;
    },
  );

  app.post(
    '/api/reviews/:id/corrections',
    {
      schema: {
        summary:
          "Make the corrections a round's answers call for: detach sentences reviewers found linked to the wrong event, move in those they found missing from theirs",
        description:
          'For each item whose combined answer contradicts the linker (a link answered "different": the sentence is detached; a miss answered "same": the sentence moves into that event), one correction through the corrections log, noted with the round, undoable like any other. An item whose sentence or event has changed since is refused and listed, not forced; so is a merge answered "different", which a person splits on the event page.',
        tags: TAGS,
        params,
        response: {
          200: {
            type: 'object',
            properties: {
              made: {
                type: 'array',
                items: { type: 'object', properties: { item: int, correction: str, kind: str }, required: ['item', 'correction', 'kind'] },
              },
              refused: { type: 'array', items: { type: 'object', properties: { item: int, reason: str }, required: ['item', 'reason'] } },
              agreed: { ...int, description: 'Items whose answers agree with the linker (nothing to correct).' },
            },
            required: ['made', 'refused', 'agreed'],
          },
          404: errorSchema,
          503: errorSchema,
        },
      },
    },
    async (req) => {
      if (!apply)
        throw new StrandError('STRAND_STOPPED', 'corrections are made by the process that links: send them to a server running --role all');
      const round = await find(req.params.id);
      const verdicts = roundVerdicts(await store.reviewAnswers(round.id));
      const made: { item: number; correction: string; kind: string }[] = [];
      const refused: { item: number; reason: string }[] = [];
      let agreed = 0;
      for (const item of round.items) {
        const same = verdicts.get(item.item);
        if (same === undefined) continue;
        if (same === item.linked) {
          agreed++;
          continue;
        }
        if (item.mergedFrom) {
          // Which sentences came with the absorbed event is not kept: a person divides it.
          refused.push({ item: item.item, reason: `a merge found wrong: split ${item.eventId} by hand (the event page's Split)` });
          continue;
        }
        if (item.stratum === 'back-reference') {
          // Detaching would give the sentence an event of its own, and it has one already.
          refused.push({
            item: item.item,
            reason: `a back-reference found wrong: the sentence keeps its own event; detach it from ${item.eventId} by hand if it should go`,
          });
          continue;
        }
        const mention = { articleId: item.articleId, sentenceIndex: item.sentenceIndex };
        // Where the sentence is now: a miss's sentence sits in the event it opened (maybe merged since).
        const links = (await store.getArticle(item.articleId))?.sentences.find((x) => x.index === item.sentenceIndex)?.links ?? [];
        const request: CorrectionRequest | null = item.linked
          ? links.some((l) => l.eventId === item.eventId)
            ? { kind: 'detach', from: item.eventId, mentions: [mention] }
            : null
          : links[0]
            ? { kind: 'move', from: links[0].eventId, to: item.eventId, mentions: [mention] }
            : null;
        if (!request) {
          refused.push({ item: item.item, reason: 'the sentence is no longer where the round found it' });
          continue;
        }
        try {
          const c = await apply(request, { by: req.keyId ?? 'local', note: `review round ${round.id}, item ${item.item}` });
          made.push({ item: item.item, correction: c.id, kind: c.kind });
        } catch (err) {
          refused.push({ item: item.item, reason: err instanceof Error ? err.message : String(err) });
        }
      }
      return { made, refused, agreed };
    },
  );

  app.get(
    '/api/reviews/:id/report',
    {
      schema: {
        summary:
          "What a round's answers say: agreement, reviewers' error rates, precision and recall with 95 % intervals, the threshold they suggest",
        description:
          "Agreement is Krippendorff's alpha (nominal; 'unsure' left out), overall, per stratum, and without each reviewer in turn (a reviewer whose absence raises it agrees least). Answers are combined with Dawid–Skene (each reviewer weighted by their estimated error rates). Precision and recall are over the linker's candidates, overall, by ISO week and by outlet of the sentence. The calibration is the move of the link threshold where a link becomes the more likely, suggested only when answers the fit did not see bear it out (cross-validated F1 rises); it is applied with POST /api/link-threshold (round), not here.",
        tags: TAGS,
        params,
        response: {
          200: {
            type: 'object',
            properties: {
              round: roundSchema,
              items: int,
              answered: int,
              complete: int,
              answers: int,
              reviewers: {
                type: 'array',
                items: {
                  type: 'object',
                  properties: { reviewer: str, answers: int, unsure: int, errorRate: nullableNum, alphaWithout: nullableNum },
                  required: ['reviewer', 'answers', 'unsure', 'errorRate', 'alphaWithout'],
                },
              },
              alpha: {
                type: 'object',
                properties: { overall: nullableNum, byStratum: { type: 'object', additionalProperties: nullableNum } },
                required: ['overall', 'byStratum'],
              },
              quality: {
                type: 'object',
                properties: {
                  overall: quality,
                  byWeek: {
                    type: 'array',
                    items: {
                      type: 'object',
                      properties: { week: str, ...quality.properties },
                      required: ['week', 'precision', 'recall', 'merges', 'backReferences'],
                    },
                  },
                  byOutlet: {
                    type: 'array',
                    items: {
                      type: 'object',
                      properties: { outlet: str, ...quality.properties },
                      required: ['outlet', 'precision', 'recall', 'merges', 'backReferences'],
                    },
                  },
                },
                required: ['overall', 'byWeek', 'byOutlet'],
              },
              calibration: {
                type: 'object',
                properties: {
                  offset: { ...num, description: 'The move suggested: the fitted one when held-out answers bear it out, else 0.' },
                  fitted: { ...num, description: "The fit's own move (0 when the answers do not place the bar within reach)." },
                  placed: { type: 'boolean' },
                  validated: { type: 'boolean', description: 'Whether cross-validated F1 rises with the fitted move.' },
                  f1Before: num,
                  f1After: num,
                  cvF1Before: num,
                  cvF1After: num,
                  decided: int,
                },
                required: ['offset', 'fitted', 'placed', 'validated', 'f1Before', 'f1After', 'cvF1Before', 'cvF1After', 'decided'],
              },
              caution: str,
            },
            required: ['round', 'items', 'answered', 'complete', 'answers', 'reviewers', 'alpha', 'quality', 'calibration', 'caution'],
          },
          404: errorSchema,
        },
      },
    },
    async (req) => {
      const round = await find(req.params.id);
      return {
        round: summary(round, round.items.length),
        ...JSON.parse(JSON.stringify(roundReport(round, await store.reviewAnswers(round.id)), nanAsNull)),
        caution: CAUTION,
      };
    },
  );
};
