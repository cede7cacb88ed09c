/**
 * When to poll a feed next. Pure functions of the outcome, the clock and a random source,
 * so the schedule can be tested without waiting.
 */

/**
 * The wait a Retry-After header asks for, ms from `now`, or null when the value is neither
 * form RFC 9110 (section 10.2.3) allows: delay-seconds (a non-negative integer) or an
 * HTTP-date. A date in the past asks for no wait.
 */
export function retryAfterMs(value: string | null, now: Date): number | null {
  if (value === null) return null;
  const v = value.trim();
  if (/^\d+$/.test(v)) return Number(v) * 1000;
  // HTTP-date: IMF-fixdate, or the obsolete RFC 850 and asctime forms (all read by Date.parse).
  if (!/^[A-Za-z]{3},? /.test(v) && !/^[A-Za-z]+day, /.test(v)) return null;
  const at = Date.parse(v.replace(/^([A-Za-z]{3}) ([A-Za-z]{3}) +(\d+) (\S+) (\d{4})$/, '$1, $3 $2 $5 $4 GMT'));
  if (Number.isNaN(at)) return null;
  return Math.max(0, at - now.getTime());
}

/**
 * Exponential backoff with "equal jitter" (Brooker, "Exponential Backoff And Jitter", AWS
 * Architecture Blog, 2015): the n-th failure in a row waits between half and all of
 * min(cap, base x 2^n), so many feeds failing together do not retry in step.
 */
export function backoffMs(failures: number, baseMs: number, capMs: number, random: () => number): number {
  const ceiling = Math.min(capMs, baseMs * 2 ** Math.min(failures, 30));
  return Math.round(ceiling / 2 + random() * (ceiling / 2));
}

/** The median of a list of numbers, or null when it is empty. */
export function median(xs: readonly number[]): number | null {
  if (xs.length === 0) return null;
  const s = [...xs].sort((a, b) => a - b);
  const mid = s.length >> 1;
  return s.length % 2 ? s[mid]! : (s[mid - 1]! + s[mid]!) / 2;
}
