/**
 * The link threshold, calibrated on the stream itself.
 *
 * Whether a mention's best candidate is its event is a two-part question: how well it
 * scores, and how often mentions in this stream have an earlier mention of their event
 * at all. The second varies by an order of magnitude between kinds of news: in dated
 * business news most event sentences report something no earlier sentence did, while in
 * encyclopedia-style or incident coverage most retell an event already seen. A fixed
 * threshold fits one kind and fails the other.
 *
 * The linker keeps a tally of the mentions it has scored and of those whose best
 * candidate scored at least `anchor` (a high-scoring candidate is the mark of a stream
 * rich in repeats), and sets the threshold as the Bayes decision with that share r as
 * the prior odds of a repeat, for a log-likelihood ratio linear in the score:
 *
 *   threshold = base + slope x ln((1 - r) / r),   r = (high + prior x share0) / (mentions + prior)
 *
 * so a stream rich in repeats links on weaker evidence, and a stream of mostly new
 * events asks for more. `prior` pseudo-mentions at `share0` keep the first few
 * mentions from swinging it. The tally is stored with each commit, so a restarted
 * linker resumes with the threshold an uninterrupted one would have. With mode
 * 'fixed' the threshold is `base` throughout. An operator's adjustment (fitted to reviewed
 * links, review/calibrate.ts, or set by hand) moves `base` by an offset; the stream's
 * calibration then works from there.
 */
import type { LinkTally } from '../store/store.js';

/** Calibration settings (see config schema for defaults and how they were chosen). */
export interface CalibrationOptions {
  mode: 'stream' | 'fixed';
  /** Score at or above which a best candidate counts as high. */
  anchor: number;
  /** Threshold change per unit of log prior odds. */
  slope: number;
  /** Pseudo-mentions of the starting share. */
  priorMentions: number;
  /** The share of high best candidates assumed before any mention is seen. */
  priorShare: number;
}

/** Lowest and highest threshold calibration can set, so a strange stream cannot turn linking off or link everything. */
const FLOOR = 0.05;
const CEILING = 0.9;

/** The stream's tally and the threshold it gives. */
export class Calibration {
  private tally: LinkTally = { mentions: 0, high: 0 };
  private offset = 0;

  constructor(
    private readonly base: number,
    private readonly o: CalibrationOptions,
  ) {}

  /** Moves the base threshold by an operator's adjustment (0: as configured). */
  setOffset(offset: number): void {
    this.offset = offset;
  }

  /** Restores a stored tally. */
  load(t: LinkTally): void {
    this.tally = { mentions: t.mentions, high: t.high };
  }

  /** The share of high best candidates, prior included. */
  share(extra: LinkTally = { mentions: 0, high: 0 }): number {
    const p = this.o.priorMentions;
    return (this.tally.high + extra.high + p * this.o.priorShare) / (this.tally.mentions + extra.mentions + p);
  }

  /** The threshold for the next mention, given what a plan in progress has counted so far. */
  threshold(extra?: LinkTally): number {
    const base = this.base + this.offset;
    if (this.o.mode === 'fixed') return base;
    const r = Math.min(1 - 1e-6, Math.max(1e-6, this.share(extra)));
    return Math.min(CEILING, Math.max(FLOOR, base + this.o.slope * Math.log((1 - r) / r)));
  }

  /** Whether a best-candidate score counts as high. */
  isHigh(bestScore: number): boolean {
    return bestScore >= this.o.anchor;
  }

  /** Adds a committed plan's counts. */
  add(delta: LinkTally): void {
    this.tally = { mentions: this.tally.mentions + delta.mentions, high: this.tally.high + delta.high };
  }

  /** The tally as it stands (for statistics and tests). */
  current(): LinkTally {
    return { ...this.tally };
  }
}
