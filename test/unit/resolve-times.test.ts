import { describe, expect, it } from 'vitest';
import { resolveTimes } from '../../src/text/resolve-times.js';

// Expected dates written from the Gregorian calendar for October 2026:
//   Mo Tu We Th Fr Sa Su
//             1  2  3  4
//    5  6  7  8  9 10 11
//   12 13 14 15 16 17 18
//   19 20 21 22 23 24 25
// The reference is an article published on Thursday 2026-10-15 at 09:00 UTC.
const PUBLISHED = '2026-10-15T09:00:00Z';

const PAST: [string, string, string, string][] = [
  ['The flood began on Saturday.', 'on Saturday', '2026-10-10', '2026-10-10'],
  ['The vote was held on Monday night.', 'on Monday night', '2026-10-12', '2026-10-12'],
  ['The talks collapsed on Thursday.', 'on Thursday', '2026-10-15', '2026-10-15'],
  ['Police said yesterday that a man was held.', 'yesterday', '2026-10-14', '2026-10-14'],
  ['The span fell on October 11.', 'October 11', '2026-10-11', '2026-10-11'],
  ['The levee failed on the night of October 5.', 'October 5', '2026-10-05', '2026-10-05'],
  ['The board met on March 3.', 'March 3', '2026-03-03', '2026-03-03'],
  ['The guild gave notice on September 26.', 'September 26', '2026-09-26', '2026-09-26'],
  ['The bridge was inspected two days earlier.', 'two days earlier', '2026-10-13', '2026-10-13'],
  ['The fire was last week.', 'last week', '2026-10-05', '2026-10-11'],
  ['The last warning was issued in 2017.', 'in 2017', '2017-01-01', '2017-12-31'],
];

describe('resolving time expressions against the publication date', () => {
  it.each(PAST)('%s', (sentence, text, start, end) => {
    const found = resolveTimes(sentence, PUBLISHED, false);
    expect(found).toContainEqual({ text: expect.stringContaining(text.split(' ').at(-1)!), start, end });
  });

  it('reads a weekday forward when the sentence speaks of the future', () => {
    expect(resolveTimes('Members will vote on Saturday.', PUBLISHED, true)).toEqual([
      { text: 'on Saturday', start: '2026-10-17', end: '2026-10-17' },
    ]);
  });

  it('reads a month and day forward for a future sentence', () => {
    expect(resolveTimes('He will be sentenced on October 30.', PUBLISHED, true)).toEqual([
      { text: 'October 30', start: '2026-10-30', end: '2026-10-30' },
    ]);
  });

  it('drops relative phrases that would put a reported event after the report', () => {
    expect(resolveTimes('The fund came a day after the death toll rose.', PUBLISHED, false)).toEqual([]);
  });

  it('ignores a time of day with no day', () => {
    expect(resolveTimes('The span fell at 5 a.m.', PUBLISHED, false)).toEqual([]);
  });

  it('takes a whole month when only the month is given', () => {
    expect(resolveTimes('The company dismissed staff in April.', PUBLISHED, false)).toEqual([
      { text: 'April', start: '2026-04-01', end: '2026-04-30' },
    ]);
  });
});
