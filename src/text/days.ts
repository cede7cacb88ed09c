/** Day arithmetic on ISO dates (YYYY-MM-DD), in UTC so results never depend on the host's zone. */

const DAY_MS = 86_400_000;

/** The UTC day of a timestamp or Date, as YYYY-MM-DD. */
export function dayOf(t: string | Date): string {
  return (typeof t === 'string' ? new Date(t) : t).toISOString().slice(0, 10);
}

/** Adds n days (negative to go back). */
export function addDays(day: string, n: number): string {
  return new Date(Date.parse(`${day}T00:00:00Z`) + n * DAY_MS).toISOString().slice(0, 10);
}

/** Whole days from a to b (b - a). */
export function daysBetween(a: string, b: string): number {
  return Math.round((Date.parse(`${b}T00:00:00Z`) - Date.parse(`${a}T00:00:00Z`)) / DAY_MS);
}

/**
 * Day number since the Unix epoch, for compact arithmetic in hot paths (linking reads
 * several per candidate). A plain YYYY-MM-DD is counted by Hinnant's days-from-civil
 * algorithm, without building a date string and parsing it; anything else goes through
 * Date.parse as before.
 */
export function dayNumber(day: string): number {
  if (day.length === 10 && day.charCodeAt(4) === 45 && day.charCodeAt(7) === 45) {
    const y0 = digits(day, 0, 4);
    const m = digits(day, 5, 7);
    const d = digits(day, 8, 10);
    if (y0 >= 0 && m >= 1 && m <= 12 && d >= 1 && d <= daysInMonth(y0, m)) {
      const y = m <= 2 ? y0 - 1 : y0;
      const era = Math.floor(y / 400);
      const yoe = y - era * 400;
      const doy = Math.floor((153 * (m + (m > 2 ? -3 : 9)) + 2) / 5) + d - 1;
      const doe = yoe * 365 + Math.floor(yoe / 4) - Math.floor(yoe / 100) + doy;
      return era * 146_097 + doe - 719_468;
    }
  }
  return Math.floor(Date.parse(`${day}T00:00:00Z`) / DAY_MS);
}

/** The decimal number in s[from, to), or -1 when a character is not a digit. */
function digits(s: string, from: number, to: number): number {
  let n = 0;
  for (let i = from; i < to; i++) {
    const c = s.charCodeAt(i) - 48;
    if (c < 0 || c > 9) return -1;
    n = n * 10 + c;
  }
  return n;
}

function daysInMonth(y: number, m: number): number {
  if (m === 2) return (y % 4 === 0 && y % 100 !== 0) || y % 400 === 0 ? 29 : 28;
  return m === 4 || m === 6 || m === 9 || m === 11 ? 30 : 31;
}

/** Weekday of a day, 0 = Sunday. */
export function weekday(day: string): number {
  return new Date(`${day}T00:00:00Z`).getUTCDay();
}

/** The last day of the month a day falls in. */
export function endOfMonth(day: string): string {
  const d = new Date(`${day.slice(0, 7)}-01T00:00:00Z`);
  d.setUTCMonth(d.getUTCMonth() + 1);
  d.setUTCDate(0);
  return d.toISOString().slice(0, 10);
}
