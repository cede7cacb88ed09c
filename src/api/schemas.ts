/**
 * The parts of the API's JSON Schemas that several routes share (records, errors, query
 * pieces). Each route's own schema sits beside it in routes/; fastify validates requests
 * and serialises responses with them, the type provider infers the handlers' types from
 * them, and @fastify/swagger turns them into the OpenAPI document, so they are the single
 * description of the API.
 */

export const str = { type: 'string' } as const;
export const nullableStr = { type: ['string', 'null'] } as const;
export const num = { type: 'number' } as const;
export const int = { type: 'integer' } as const;
export const strings = { type: 'array', items: str } as const;

/** Shown with every answer that carries automatic links. */
export const CAUTION =
  'Links between sentences and events are machine suggestions and can be wrong, including about real people. Check the evidence and the sources before publishing or acting on them.';

/** Why a mention was linked. */
export const evidenceSchema = {
  type: 'object',
  description: 'Why the mention was linked: what an analyst needs to judge the link.',
  properties: {
    similarity: { ...num, description: 'Cosine similarity between the sentence and the event centroid.' },
    timeDecay: { ...num, description: 'Multiplier from the time gap: 1 same time, 0.5 one half-life apart.' },
    timeGapDays: { ...num, description: "Days between the sentence's time and the event's time span." },
    sharedParticipants: strings,
    sharedPlaces: strings,
    overlapBonus: { ...num, description: 'Score added for shared rare names.' },
    opened: { type: 'boolean', description: 'The mention opened this event.' },
    crossStory: {
      type: 'boolean',
      description:
        "The event belongs to another story than the sentence's article: such a link had to clear a higher bar (link.crossStoryMargin). These links across stories are the rarest and the most worth checking.",
    },
    sizeFactor: { ...num, description: 'How much the number of sentences the event already holds raised the score (link.sizePrior).' },
    sameArticleFactor: {
      ...num,
      description: "The share of the score kept because the sentence's own article opened the event (link.sameArticleFactor).",
    },
    correctedBy: { ...str, description: "Set when an analyst's correction put the link here: the correction's id in /api/corrections." },
    conflictingNames: {
      type: 'boolean',
      description: 'True when the sentence and the event each name people or places but share none of them: a link to weigh.',
    },
    refersBack: {
      type: 'boolean',
      description:
        'The sentence points back at a happening ("the move", "this deal") and was linked to the best-scoring event its own article reported before (link.backReferences). Such a link needed no bar, is not counted among the event\'s mentions and does not change the event; it is the least certain kind of link (about four in ten were right on the annotated news we measured).',
    },
    bar: {
      ...num,
      description:
        'The score the link had to reach: the threshold as calibrated on the stream at the time, plus link.crossStoryMargin for an event of another story sharing no name.',
    },
    nearest: {
      type: 'object',
      description:
        'For a sentence that opened its event: the nearest known event, its score and the bar it fell short of (absent when there was no candidate). A near miss is where a missed link would be.',
      properties: { eventId: str, score: num, bar: num },
      required: ['eventId', 'score', 'bar'],
    },
  },
  required: ['similarity', 'timeDecay', 'timeGapDays', 'sharedParticipants', 'sharedPlaces', 'overlapBonus', 'opened'],
} as const;

export const timeSchema = { type: 'object', properties: { text: str, start: str, end: str }, required: ['text', 'start', 'end'] } as const;

/** An event as listed. */
export const eventSummarySchema = {
  type: 'object',
  properties: {
    id: str,
    label: { ...str, description: 'Short summary drawn from a mention.' },
    firstSeen: { ...str, format: 'date-time' },
    lastSeen: { ...str, format: 'date-time' },
    timeStart: { ...str, format: 'date', description: 'Earliest day the mentions place the event on.' },
    timeEnd: { ...str, format: 'date' },
    participants: strings,
    places: strings,
    outlets: strings,
    independentOutlets: { ...int, description: 'Outlets with a mention that is not a verbatim copy of another outlet.' },
    mentionCount: {
      ...int,
      description: 'Sentences that report the event; back-references (evidence.refersBack) are listed with its mentions but not counted.',
    },
    version: int,
    story: {
      ...nullableStr,
      description:
        'The story the event lives in (that of the article that opened it, after story merges); null for events from before stories were kept.',
    },
  },
  required: [
    'id',
    'label',
    'firstSeen',
    'lastSeen',
    'timeStart',
    'timeEnd',
    'participants',
    'places',
    'outlets',
    'independentOutlets',
    'mentionCount',
    'version',
    'story',
  ],
} as const;

/** A story as listed. */
export const storySummarySchema = {
  type: 'object',
  description:
    'A story: an ongoing thread of coverage that articles join by their whole text, names and time (an automatic grouping, a suggestion like every link).',
  properties: {
    id: str,
    label: { ...str, description: 'The headline of the article that opened the story.' },
    firstSeen: { ...str, format: 'date-time' },
    lastSeen: { ...str, format: 'date-time' },
    articleCount: int,
    eventCount: int,
    outlets: strings,
    independentOutlets: { ...int, description: "Outlets with an article that is not a copy of another outlet's." },
    names: { ...strings, description: 'People, organisations and places the articles name most often.' },
    version: int,
  },
  required: ['id', 'label', 'firstSeen', 'lastSeen', 'articleCount', 'eventCount', 'outlets', 'independentOutlets', 'names', 'version'],
} as const;

export const mentionSchema = {
  type: 'object',
  properties: {
    articleId: str,
    articleTitle: str,
    articleUrl: nullableStr,
    published: str,
    isCopy: { type: 'boolean' },
    sentenceIndex: int,
    text: { ...nullableStr, description: 'Null once the retention policy has erased the text.' },
    score: { ...num, description: 'Link score in [0, 1].' },
    rank: { ...int, description: '0 for the sentence’s best link.' },
    evidence: evidenceSchema,
    times: { type: 'array', items: timeSchema },
  },
  required: [
    'articleId',
    'articleTitle',
    'articleUrl',
    'published',
    'isCopy',
    'sentenceIndex',
    'text',
    'score',
    'rank',
    'evidence',
    'times',
  ],
} as const;

export const errorSchema = {
  type: 'object',
  properties: { error: { type: 'object', properties: { code: str, message: str }, required: ['code', 'message'] } },
  required: ['error'],
} as const;

export const dayOrTime = { type: 'string', pattern: '^\\d{4}-\\d{2}-\\d{2}(T[0-9:.]+(Z|[+-]\\d{2}:\\d{2}))?$' } as const;

/** ?limit=1..500 (default 100), for the operator lists. */
export const limitQuery = {
  type: 'object',
  additionalProperties: false,
  properties: { limit: { type: 'integer', minimum: 1, maximum: 500, default: 100 } },
} as const;
