/**
 * The operator's hand on the link threshold: what is in effect, moving it (by a review
 * round's fit or by hand) and rolling it back. Each move is a correction in the audit log,
 * made in the linker's turn and undoable like any other; nothing already linked changes.
 */
import { StrandError } from '../../errors.js';
import { MAX_THRESHOLD_OFFSET } from '../../link/corrections.js';
import { thresholdAdjustments } from '../../link/threshold-adjustments.js';
import { roundReport } from '../../review/rounds.js';
import type { Corrections, Reviews } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import type { ApplyCorrection } from './corrections.js';
import { errorSchema, nullableStr, num, str } from '../schemas.js';

/** The configured threshold and how the stream calibrates it (config link.threshold, link.calibration.mode). */
export interface LinkSettings {
  threshold: number;
  calibration: 'stream' | 'fixed';
}

const TAGS = ['reviews'];
const note = { type: 'string', maxLength: 2000 } as const;
const adjustmentSchema = {
  type: 'object',
  properties: {
    correction: { ...str, description: 'The record in the corrections log.' },
    kind: { type: 'string', enum: ['threshold', 'undo'] },
    from: { ...num, description: 'The adjustment in effect before.' },
    to: { ...num, description: 'The adjustment it set.' },
    round: { ...nullableStr, description: 'The review round it was fitted to; null when set by hand.' },
    heldOutF1: {
      type: ['object', 'null'],
      description: "The fit's cross-validated F1 of the round's decisions at the old and the new threshold.",
      properties: { before: num, after: num },
    },
    by: str,
    at: str,
    note: nullableStr,
    undoneBy: nullableStr,
    undoes: nullableStr,
  },
  required: ['correction', 'kind', 'from', 'to', 'round', 'heldOutF1', 'by', 'at', 'note', 'undoneBy', 'undoes'],
} as const;
const stateSchema = {
  type: 'object',
  properties: {
    configured: { ...num, description: 'link.threshold as configured.' },
    calibration: {
      type: 'string',
      enum: ['stream', 'fixed'],
      description: "'stream': each sentence's bar is moved from the base as the stream shows itself.",
    },
    offset: { ...num, description: 'The adjustment in effect (0: none).' },
    base: { ...num, description: 'configured + offset: the threshold the linker starts from.' },
    current: { ...nullableStr, description: 'The correction that set the adjustment in effect.' },
    history: { type: 'array', items: adjustmentSchema, description: 'Adjustments and their undos, newest first (at most 50).' },
  },
  required: ['configured', 'calibration', 'offset', 'base', 'current', 'history'],
} as const;

/** /api/link-threshold and below. */
export const linkThresholdRoutes: RoutePlugin<{
  store: Corrections & Reviews;
  settings: LinkSettings;
  apply: ApplyCorrection | undefined;
}> = async (app, { store, settings, apply }) => {
  const state = async () => {
    const s = await thresholdAdjustments(store, 50);
    return {
      configured: settings.threshold,
      calibration: settings.calibration,
      offset: s.offset,
      base: Math.round((settings.threshold + s.offset) * 1e4) / 1e4,
      current: s.current,
      history: s.history,
    };
  };
  const linker = (): ApplyCorrection => {
    if (!apply)
      throw new StrandError('STRAND_STOPPED', 'the threshold is moved by the process that links: send this to a server running --role all');
    return apply;
  };

  app.get(
    '/api/link-threshold',
    {
      schema: {
        summary: 'The link threshold in effect: as configured, the adjustment on it, and the adjustments made',
        tags: TAGS,
        response: { 200: stateSchema },
      },
    },
    async () => state(),
  );

  app.post(
    '/api/link-threshold',
    {
      schema: {
        summary: "Move the link threshold: by a review round's fit, or by hand",
        description: `With \`round\`: the move the round's combined answers suggest (its report's calibration) is added to the adjustment in effect; refused with 409 when the answers do not place the threshold or answers the fit did not see do not bear the move out. With \`offset\`: the adjustment to the configured threshold, set by hand (at most ${MAX_THRESHOLD_OFFSET} either way). The move is a correction in the audit log, in effect from the next sentence linked; nothing linked before changes. Roll it back with POST /api/link-threshold/rollback or by undoing the correction.`,
        tags: TAGS,
        body: {
          type: 'object',
          additionalProperties: false,
          properties: {
            round: { type: 'string', pattern: '^rv_[0-9a-f]{12}$' },
            offset: { type: 'number', minimum: -MAX_THRESHOLD_OFFSET, maximum: MAX_THRESHOLD_OFFSET },
            note,
          },
        },
        response: { 200: stateSchema, 400: errorSchema, 404: errorSchema, 409: errorSchema, 503: errorSchema },
      },
    },
    async (req) => {
      const b = req.body ?? {};
      if ((b.round === undefined) === (b.offset === undefined))
        throw new StrandError('STRAND_REQUEST_INVALID', 'give either round (apply its fit) or offset (set by hand)');
      const author = { by: req.keyId ?? 'local', note: b.note ?? null };
      if (b.offset !== undefined) {
        await linker()({ kind: 'threshold', offset: b.offset, round: null, heldOutF1: null }, author);
        return state();
      }
      const round = await store.getReviewRound(b.round!);
      if (!round) throw new StrandError('STRAND_NOT_FOUND', `no review round ${b.round}`);
      const fit = roundReport(round, await store.reviewAnswers(round.id)).calibration;
      if (!fit.validated)
        throw new StrandError(
          'STRAND_CORRECTION_CONFLICT',
          fit.placed && fit.fitted !== 0
            ? `the move fitted to ${round.id} (${fit.fitted.toFixed(3)}) does no better on answers the fit did not see: nothing to apply (set an offset by hand to move it anyway)`
            : `the answers of ${round.id} do not place the threshold (${fit.decided} decided items): nothing to apply`,
        );
      // Added to the adjustment in effect in the linker's turn: the fit's margins were measured from it.
      await linker()(
        {
          kind: 'threshold',
          offset: fit.offset,
          relative: true,
          round: round.id,
          heldOutF1: { before: fit.cvF1Before, after: fit.cvF1After },
        },
        author,
      );
      return state();
    },
  );

  app.post(
    '/api/link-threshold/rollback',
    {
      schema: {
        summary: 'Roll back the adjustment in effect: the one before it (or none) is in effect again',
        tags: TAGS,
        body: { type: ['object', 'null'], additionalProperties: false, properties: { note } },
        response: { 200: stateSchema, 409: errorSchema, 503: errorSchema },
      },
    },
    async (req) => {
      const { current } = await thresholdAdjustments(store, 0);
      if (!current) throw new StrandError('STRAND_CORRECTION_CONFLICT', 'no adjustment is in effect: the threshold is as configured');
      await linker()({ kind: 'undo', correction: current }, { by: req.keyId ?? 'local', note: req.body?.note ?? null });
      return state();
    },
  );
};
