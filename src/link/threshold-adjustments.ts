/**
 * The operator's adjustments of the link threshold as the corrections log keeps them: the
 * one in effect (the newest still standing) and their history, undos included.
 */
import type { CorrectionRecord, Corrections, ThresholdMove } from '../store/store.js';

/** One adjustment, or the undo of one, as listed. */
export interface ThresholdAdjustment extends ThresholdMove {
  correction: string;
  kind: 'threshold' | 'undo';
  by: string;
  at: string;
  note: string | null;
  /** For an adjustment: the undo that took it back, once one did. For an undo: the adjustment it took back. */
  undoneBy: string | null;
  undoes: string | null;
}

/** The adjustment in effect and the latest `limit` entries of the history, newest first. */
export async function thresholdAdjustments(
  store: Pick<Corrections, 'listCorrections'>,
  limit: number,
): Promise<{ offset: number; current: string | null; history: ThresholdAdjustment[] }> {
  const PAGE = 500;
  const history: ThresholdAdjustment[] = [];
  let current: CorrectionRecord | null = null;
  for (let offset = 0; ; offset += PAGE) {
    const { corrections } = await store.listCorrections(PAGE, offset);
    for (const c of corrections) {
      if (!c.threshold || (c.kind !== 'threshold' && c.kind !== 'undo')) continue;
      if (c.kind === 'threshold' && c.undoneBy === null && current === null) current = c;
      if (history.length < limit) history.push(entry(c));
    }
    if (corrections.length < PAGE) break;
  }
  return { offset: current?.threshold?.to ?? 0, current: current?.id ?? null, history };
}

function entry(c: CorrectionRecord): ThresholdAdjustment {
  return {
    ...c.threshold!,
    correction: c.id,
    kind: c.kind as 'threshold' | 'undo',
    by: c.by,
    at: c.at,
    note: c.note,
    undoneBy: c.undoneBy,
    undoes: c.undoes,
  };
}
