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

/** Day number since the Unix epoch, for compact arithmetic in hot paths. */
export function dayNumber(day: string): number {
  return Math.floor(Date.parse(`${day}T00:00:00Z`) / DAY_MS);
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
