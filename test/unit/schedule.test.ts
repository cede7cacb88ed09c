import { describe, expect, it } from 'vitest';
import { backoffMs, median, retryAfterMs } from '../../src/poll/schedule.js';

const NOW = new Date('1999-12-31T23:57:59.000Z');

describe('Retry-After (RFC 9110, section 10.2.3)', () => {
  it('reads the two examples of the RFC: an HTTP-date and delay-seconds', () => {
    // "Retry-After: Fri, 31 Dec 1999 23:59:59 GMT" and "Retry-After: 120", RFC 9110 10.2.3.
    expect(retryAfterMs('Fri, 31 Dec 1999 23:59:59 GMT', NOW)).toBe(120_000);
    expect(retryAfterMs('120', NOW)).toBe(120_000);
  });

  it('reads the obsolete date forms HTTP recipients must accept (RFC 9110, 5.6.7)', () => {
    // The RFC's own examples of the three forms, all for the same instant.
    expect(retryAfterMs('Sunday, 06-Nov-94 08:49:37 GMT', new Date('1994-11-06T08:48:37Z'))).toBe(60_000);
    expect(retryAfterMs('Sun Nov  6 08:49:37 1994', new Date('1994-11-06T08:48:37Z'))).toBe(60_000);
    expect(retryAfterMs('Sun, 06 Nov 1994 08:49:37 GMT', new Date('1994-11-06T08:48:37Z'))).toBe(60_000);
  });

  it('asks for no wait for a date in the past, and ignores values of neither form', () => {
    expect(retryAfterMs('Fri, 31 Dec 1999 23:00:00 GMT', NOW)).toBe(0);
    for (const bad of ['-5', '1.5', 'soon', '', 'Fri, 99 Foo 1999', null]) expect(retryAfterMs(bad, NOW)).toBeNull();
  });
});

describe('backoff with equal jitter', () => {
  it('waits between half and all of base x 2^failures, never past the cap', () => {
    expect(backoffMs(1, 1000, 60_000, () => 0)).toBe(1000);
    expect(backoffMs(1, 1000, 60_000, () => 1)).toBe(2000);
    expect(backoffMs(3, 1000, 60_000, () => 0.5)).toBe(6000);
    expect(backoffMs(20, 1000, 60_000, () => 1)).toBe(60_000);
    expect(backoffMs(1000, 1000, 60_000, () => 0)).toBe(30_000);
  });
});

describe('median', () => {
  it('is the middle value, or the mean of the two middle values', () => {
    expect(median([])).toBeNull();
    expect(median([5, 1, 3])).toBe(3);
    expect(median([4, 1, 3, 2])).toBe(2.5);
  });
});
