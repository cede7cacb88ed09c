/**
 * Finds time expressions in a sentence and resolves them against the article's
 * publication date into day ranges. chrono-node does the parsing; the rules here make it
 * read like news: a bare weekday ("on Saturday") or a month and day without a year means
 * the most recent one unless the sentence speaks of the future, "last week" is the whole
 * previous week, and a year alone ("in 2017") is that year.
 */
import * as chrono from 'chrono-node';
import type { TimeExpression } from '../records.js';
import { addDays, dayOf, daysBetween, endOfMonth, weekday } from './days.js';

// Parts of a day put before a date ("the night of October 5") confuse chrono; drop them.
const PART_OF_DAY_OF = /\b(?:night|morning|evening|afternoon|weekend) of\b/gi;
const LAST_WEEK = /\blast week\b/i;
const THIS_WEEK = /\bthis week\b/i;
const RELATIVE_FORWARD = /\b(?:after|later|from now|tomorrow|next)\b/i;
const YEAR_ALONE = /\b(?:in|since|by|until|from|during|of) ((?:1[89]|20)\d\d)\b(?!\s*(?:marks|people|votes|[a-z]+s\b))/gi;

/**
 * Words without which a sentence holds no time expression chrono-node could read: a digit,
 * a weekday, a month, or a relative word. Most sentences have none, and skipping the parser
 * for them saves most of its cost.
 */
const TIME_HINT =
  /\d|day\b|night|morning|afternoon|evening|noon|week|month|year|ago\b|earlier|later|\blast\b|\bnext\b|tomorrow|tonight|\b(?:jan|feb|mar|apr|may|jun|jul|aug|sep|oct|nov|dec)[a-z]*\b|spring|summer|autumn|winter|christmas|easter/i;

/** Resolves the time expressions of `text`, published on `published` (RFC 3339). */
export function resolveTimes(text: string, published: string, future: boolean): TimeExpression[] {
  if (!TIME_HINT.test(text)) return [];
  const ref = new Date(published);
  const refDay = dayOf(ref);
  const out: TimeExpression[] = [];
  const cleaned = text.replace(PART_OF_DAY_OF, (m) => ' '.repeat(m.length));
  for (const r of chrono.parse(cleaned, { instant: ref, timezone: 0 }, { forwardDate: false })) {
    const range = toRange(r, refDay, future);
    // A reported (not future) happening cannot lie after the report; chrono reads relative
    // phrases such as "a day after" against the publication date, which is wrong here.
    // A day of slack covers time-zone differences for stated dates; a relative phrase
    // ("a day after", "later") that lands after the report is simply misread.
    const ahead = range ? daysBetween(refDay, range.start) : 0;
    const misread = !future && (ahead > 1 || (ahead > 0 && RELATIVE_FORWARD.test(r.text)));
    if (range && !misread) out.push({ text: r.text.replace(/[\s,;.]+$/, ''), ...range });
  }
  for (const m of text.matchAll(YEAR_ALONE)) {
    const year = m[1]!;
    if (!out.some((t) => t.text.includes(year))) out.push({ text: m[0], start: `${year}-01-01`, end: `${year}-12-31` });
  }
  return out;
}

function toRange(r: chrono.ParsedResult, refDay: string, future: boolean): { start: string; end: string } | null {
  const s = r.start;
  if (LAST_WEEK.test(r.text)) {
    const monday = addDays(refDay, -((weekday(refDay) + 6) % 7) - 7);
    return { start: monday, end: addDays(monday, 6) };
  }
  if (THIS_WEEK.test(r.text)) {
    const monday = addDays(refDay, -((weekday(refDay) + 6) % 7));
    return { start: monday, end: addDays(monday, 6) };
  }
  let start: string;
  if (s.isCertain('day')) {
    start = dayOf(s.date());
    // A month and day without a year: the most recent one, unless the sentence looks ahead.
    if (!s.isCertain('year')) {
      if (!future && daysBetween(refDay, start) > 1) start = shiftYear(start, -1);
      if (future && daysBetween(refDay, start) < -1) start = shiftYear(start, 1);
    }
  } else if (s.isCertain('weekday')) {
    const wanted = s.get('weekday')!;
    const diff = (wanted - weekday(refDay) + 7) % 7;
    start = future ? addDays(refDay, diff === 0 ? 7 : diff) : addDays(refDay, diff === 0 ? 0 : diff - 7);
  } else if (s.isCertain('month')) {
    const month = String(s.get('month')).padStart(2, '0');
    let year = s.isCertain('year') ? s.get('year')! : Number(refDay.slice(0, 4));
    if (!s.isCertain('year') && !future && `${year}-${month}` > refDay.slice(0, 7)) year -= 1;
    const first = `${year}-${month}-01`;
    return { start: first, end: endOfMonth(first) };
  } else {
    return null; // a time of day alone ("at 6 a.m.") says nothing about the day
  }
  const end = r.end && r.end.isCertain('day') ? dayOf(r.end.date()) : start;
  return end < start ? { start: end, end: start } : { start, end };
}

function shiftYear(day: string, by: number): string {
  const y = Number(day.slice(0, 4)) + by;
  const md = day.slice(5);
  // 29 February in a year that has none becomes 28 February.
  return md === '02-29' && !(y % 4 === 0 && (y % 100 !== 0 || y % 400 === 0)) ? `${y}-02-28` : `${y}-${md}`;
}
