/**
 * Alert rules: which notifications a subscription receives. A rule selects by type and,
 * optionally, by what the notification is about (words, participants, places, outlets), by
 * independence (copies of other articles left out) and by reach (an event reported by N
 * outlets, or in M sentences, within a window of its first report). A subscription's rules are tried in order;
 * the first that selects a notification names it in the delivery, and a notification no
 * rule selects is not delivered to that subscription. Rules read the notification as
 * written in the log, so every process judges it alike and a replay judges it again alike.
 */
import type { NotificationType } from './notification-types.js';

/** One alert rule as configured or posted. */
export interface AlertRule {
  /** Named in each delivery it selects (`rule` in the body). */
  name: string;
  /** The notification types it selects; empty: all. */
  types: NotificationType[];
  /** Words that must all appear (case-insensitive) in the label, the sentence or the headline. */
  words: string[];
  /** At least one must be among the event's or story's participants and names. */
  participants: string[];
  /** At least one must be among the event's places or the story's names. */
  places: string[];
  /** The outlet the notification is about (the one reporting) must be one of these. */
  outlets: string[];
  /** Leaves out an outlet's first report when it is a copy of another article. */
  independentOnly: boolean;
  /**
   * Selects an event at the report that brings it to this many independent outlets (an
   * `event.outlet_added` that is not a copy; outlets only copying others are not counted),
   * once per event; null: no reach condition.
   */
  minOutlets: number | null;
  /** Selects an event at the article that brings it to this many mentions (an `article.linked`), once per event; null: none. */
  minMentions: number | null;
  /** With minOutlets or minMentions: only when that report came within this many hours of the event's first. */
  withinHours: number | null;
}

/** A rule as given, before its defaults (configuration and API both accept the short form). */
export type AlertRuleInput = Partial<AlertRule> & { name: string };

/** The rule a subscription has when none is given: everything. */
export const EVERYTHING: AlertRule = ruleWithDefaults({ name: 'everything' });

/** Fills a rule's defaults. */
export function ruleWithDefaults(r: AlertRuleInput): AlertRule {
  return {
    name: r.name,
    types: r.types ?? [],
    words: r.words ?? [],
    participants: r.participants ?? [],
    places: r.places ?? [],
    outlets: r.outlets ?? [],
    independentOnly: r.independentOnly ?? false,
    minOutlets: r.minOutlets ?? null,
    minMentions: r.minMentions ?? null,
    withinHours: r.withinHours ?? null,
  };
}

/** What a rule reads of a notification body (the parts every type shares by name). */
interface Body {
  type?: string;
  data?: {
    event?: { label?: string; participants?: string[]; places?: string[]; outlets?: string[]; firstSeen?: string; mentionCount?: number };
    story?: { label?: string; names?: string[]; firstSeen?: string };
    outlet?: string;
    independent?: boolean;
    independentOutlets?: number;
    mention?: { text?: string | null; outlet?: string; published?: string };
    article?: { title?: string; outlet?: string; published?: string };
    events?: { firstSeen?: string; mentionCount?: number; mentionsAdded?: number }[];
  };
}

/** The name of the first rule that selects this notification, or null. */
export function firstMatch(rules: readonly AlertRule[], type: string, body: string): string | null {
  let parsed: Body;
  try {
    parsed = JSON.parse(body) as Body;
  } catch {
    return null;
  }
  for (const r of rules) if (selects(r, type, parsed)) return r.name;
  return null;
}

/** The body with the name of the rule that selected it (`rule`, beside `type`, `timestamp` and `data`). */
export function withRule(body: string, rule: string): string {
  try {
    return JSON.stringify({ ...(JSON.parse(body) as object), rule });
  } catch {
    return body;
  }
}

function selects(r: AlertRule, type: string, b: Body): boolean {
  if (r.types.length > 0 && !(r.types as string[]).includes(type)) return false;
  const d = b.data ?? {};
  const outlet = d.outlet ?? d.mention?.outlet ?? d.article?.outlet;
  if (r.outlets.length > 0 && (outlet === undefined || !r.outlets.includes(outlet))) return false;
  if (r.independentOnly && d.independent === false) return false;
  if (r.words.length > 0) {
    const text = [d.event?.label, d.story?.label, d.mention?.text, d.article?.title].filter(Boolean).join(' ').toLowerCase();
    if (!r.words.every((w) => text.includes(w.toLowerCase()))) return false;
  }
  const names = lower([...(d.event?.participants ?? []), ...(d.story?.names ?? [])]);
  if (r.participants.length > 0 && !r.participants.some((p) => names.has(p.toLowerCase()))) return false;
  const places = lower([...(d.event?.places ?? []), ...(d.story?.names ?? [])]);
  if (r.places.length > 0 && !r.places.some((p) => places.has(p.toLowerCase()))) return false;
  if (r.minOutlets !== null) {
    // The independent report that brings the event to N independent outlets: outlet_added
    // notifications come once per (event, outlet), so one carries the Nth.
    if (type !== 'event.outlet_added' || d.independent !== true || d.independentOutlets !== r.minOutlets) return false;
    if (!within(r, d.event?.firstSeen, d.mention?.published)) return false;
  }
  if (r.minMentions !== null) {
    // The article that takes an event from below M mentions to M or more: one per event.
    const m = r.minMentions;
    const crossed = (e: NonNullable<Body['data']>['events'] & object) =>
      e.some(
        (x) =>
          (x.mentionCount ?? 0) - (x.mentionsAdded ?? 0) < m && (x.mentionCount ?? 0) >= m && within(r, x.firstSeen, d.article?.published),
      );
    if (type !== 'article.linked' || !crossed(d.events ?? [])) return false;
  }
  return true;
}

/** True without a window, or when `at` came within it of `first`. */
function within(r: AlertRule, first: string | undefined, at: string | undefined): boolean {
  if (r.withinHours === null) return true;
  return Date.parse(at ?? '') - Date.parse(first ?? '') <= r.withinHours * 3_600_000;
}

function lower(xs: readonly string[]): Set<string> {
  return new Set(xs.map((x) => x.toLowerCase()));
}
