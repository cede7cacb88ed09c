/**
 * Feed dates: RFC 822 / RFC 2822 (RSS 2.0 pubDate), RFC 3339 (Atom, JSON Feed, dc:date),
 * and the usual broken variants, read by their own rules rather than by Date.parse, whose
 * legacy heuristics read the year 0001 as 2001 and a date without a zone in local time.
 */

const MONTHS = ['jan', 'feb', 'mar', 'apr', 'may', 'jun', 'jul', 'aug', 'sep', 'oct', 'nov', 'dec'];

/** RFC 822 section 5 zone names, and RFC 2822 section 4.3's obsolete ones, in minutes east of UTC. */
const ZONES: Record<string, number> = {
  ut: 0,
  utc: 0,
  gmt: 0,
  z: 0,
  est: -300,
  edt: -240,
  cst: -360,
  cdt: -300,
  mst: -420,
  mdt: -360,
  pst: -480,
  pdt: -420,
};

// [weekday,] day month year [hh:mm[:ss] [zone]]
const RFC822 =
  /^\s*(?:[a-z]{3,9},?\s+)?(\d{1,2})[\s-]+([a-z]{3})[a-z]*\.?[\s-]+(\d{2,4})(?:\s+(\d{1,2}):(\d{2})(?::(\d{2}))?(?:\s*([+-]\d{4}|[a-z]{1,5}))?)?\s*$/i;
// yyyy-mm-dd[(T| )hh:mm[:ss[.frac]][zone]]
const RFC3339 = /^\s*(\d{4})-(\d{2})-(\d{2})(?:[T\s](\d{2}):(\d{2})(?::(\d{2})(\.\d+)?)?\s*(Z|[+-]\d{2}:?\d{2})?)?\s*$/i;

/**
 * Milliseconds since the epoch, or NaN when the text is no date or names one that does not
 * exist (31 February, month 13). A leap second (":60", RFC 3339 section 5.7) is read as the
 * second after ":59". A date without a zone is read as UTC.
 */
export function parseFeedDate(text: string): number {
  const iso = RFC3339.exec(text);
  if (iso) {
    const [, y, mo, d, h = '0', mi = '0', s = '0', frac = '', zone = 'Z'] = iso;
    return utc(
      Number(y),
      Number(mo),
      Number(d),
      Number(h),
      Number(mi),
      Number(s),
      frac ? Math.round(Number(frac) * 1000) : 0,
      offsetMinutes(zone),
    );
  }
  const rfc = RFC822.exec(text);
  if (rfc) {
    const [, d, mon, yText, h = '0', mi = '0', s = '0', zone = 'GMT'] = rfc;
    const month = MONTHS.indexOf(mon!.toLowerCase());
    if (month < 0) return NaN;
    // RFC 2822 section 4.3: a two-digit year 00-49 is 20xx, 50-99 is 19xx; four digits as written.
    const y = yText!.length === 4 ? Number(yText) : yText!.length === 2 ? (Number(yText) < 50 ? 2000 : 1900) + Number(yText) : NaN;
    const offset = offsetMinutes(zone);
    return utc(y, month + 1, Number(d), Number(h), Number(mi), Number(s), 0, offset);
  }
  return NaN;
}

/** Minutes east of UTC for a zone as written (Z, +0200, -08:00, GMT, EST; unknown military letters are UTC, RFC 2822 4.3). */
function offsetMinutes(zone: string): number {
  const numeric = /^([+-])(\d{2}):?(\d{2})$/.exec(zone);
  if (numeric) return (numeric[1] === '-' ? -1 : 1) * (Number(numeric[2]) * 60 + Number(numeric[3]));
  return ZONES[zone.toLowerCase()] ?? (/^[a-z]$/i.test(zone) ? 0 : NaN);
}

function utc(y: number, mo: number, d: number, h: number, mi: number, s: number, ms: number, offset: number): number {
  if (![y, mo, d, h, mi, s, offset].every(Number.isFinite)) return NaN;
  if (mo < 1 || mo > 12 || d < 1 || h > 23 || mi > 59 || s > 60) return NaN;
  const date = new Date(0);
  // setUTCFullYear, unlike Date.UTC, does not read years 0-99 as 1900-1999.
  date.setUTCFullYear(y, mo - 1, d);
  if (date.getUTCDate() !== d) return NaN;
  date.setUTCHours(h, mi, s, ms);
  return date.getTime() - offset * 60_000;
}
