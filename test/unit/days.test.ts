import { describe, expect, it } from 'vitest';
import { dayNumber } from '../../src/text/days.js';

const DAY_MS = 86_400_000;

describe('dayNumber', () => {
  // Reference: the engine's own ISO date parsing (ECMA-262, Date Time String Format), which
  // the counting by days-from-civil (H. Hinnant, "chrono-Compatible Low-Level Date
  // Algorithms") must agree with on every day, leap days and century years included.
  it('counts every day from 1600 to 2400 exactly as Date.parse does', () => {
    const wrong: string[] = [];
    for (let t = Date.UTC(1600, 0, 1); t <= Date.UTC(2400, 11, 31); t += DAY_MS) {
      const day = new Date(t).toISOString().slice(0, 10);
      if (dayNumber(day) !== t / DAY_MS) wrong.push(day);
    }
    expect(wrong).toEqual([]);
  });

  it('gives day 0 to the epoch and counts back before it', () => {
    expect(dayNumber('1970-01-01')).toBe(0);
    expect(dayNumber('1969-12-31')).toBe(-1);
  });

  it('answers as Date.parse does for what is not a plain calendar day', () => {
    for (const s of ['2026-02-30', '2026-13-01', '2026-00-10', '2026-1-01', 'x026-01-01', '2026/01/01', '']) {
      expect(dayNumber(s), s).toEqual(Math.floor(Date.parse(`${s}T00:00:00Z`) / DAY_MS));
    }
  });
});
