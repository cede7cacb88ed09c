import { describe, expect, it } from 'vitest';
import { isoWeek, liveDecisions } from '../../src/review/rounds.js';
import { AT_THRESHOLD, stratumOf } from '../../src/review/sampling.js';
import type { EventQueries } from '../../src/store/store.js';

describe('ISO weeks for the review report', () => {
  // ISO 8601 week dates (weeks start on Monday; week 1 holds the year's first Thursday); common practice.
  it('puts days at the turn of a year in the week of its Thursday', () => {
    expect(isoWeek('2026-10-05T10:00:00Z')).toBe('2026-W41');
    expect(isoWeek('2021-01-03')).toBe('2020-W53');
    expect(isoWeek('2020-12-31')).toBe('2020-W53');
    expect(isoWeek('2024-12-30')).toBe('2025-W01');
    expect(isoWeek('2026-01-01')).toBe('2026-W01');
  });

  it('says undated for a sentence without a date', () => {
    expect(isoWeek('')).toBe('undated');
  });
});

describe('the decisions a review round samples from', () => {
  const evidence = {
    similarity: 0.3,
    timeDecay: 1,
    timeGapDays: 0,
    sharedParticipants: [],
    sharedPlaces: [],
    overlapBonus: 0,
    opened: false,
  };
  const mention = (sentenceIndex: number, extra: object) => ({
    articleId: 'a1',
    articleTitle: 't',
    articleUrl: null,
    outlet: 'The Vellmouth Courier',
    published: '2026-10-06T05:00:00Z',
    isCopy: false,
    sentenceIndex,
    text: 'x',
    score: 0.3,
    rank: 0,
    times: [],
    evidence: { ...evidence, ...extra },
  });
  const store = {
    listEvents: async () => ({ total: 1, events: [{ id: 'ev_1' }] }),
    getEvent: async () => ({
      mentions: [mention(0, { bar: 0.2 }), { ...mention(2, { refersBack: true }), rank: 1 }],
      merges: [],
    }),
  } as unknown as EventQueries;

  it('asks about back-references in a stratum of their own, kept out of the threshold fit like merges', async () => {
    const decisions = await liveDecisions(store, { maxEvents: 10 });
    expect(decisions.map((d) => [d.sentenceIndex, d.bar, d.refersBack === true])).toEqual([
      [0, 0.2, false],
      [2, 0.3, true],
    ]);
    expect(decisions.map((d) => stratumOf(d, 0.05))).toEqual(['confident', 'back-reference']);
    expect(AT_THRESHOLD.has('back-reference')).toBe(false);
  });
});
