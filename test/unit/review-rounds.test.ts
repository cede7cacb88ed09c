import { describe, expect, it } from 'vitest';
import { isoWeek } from '../../src/review/rounds.js';

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
