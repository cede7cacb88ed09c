/** Rows of the SQLite store as records, and the statements several of its parts share. */
import type Database from 'better-sqlite3';
import type { TimeExpression } from '../../records.js';
import type { Delivery, EventSummary, LinkedMention, StorySummary } from '../store.js';
import { decodeVector } from '../vector-codec.js';

export type Row = Record<string, unknown>;

/**
 * The label statements: read and set an event's label, and the text of its earliest linked
 * sentence that still has its text (a label drawn from an erased or moved sentence is
 * redrawn from it).
 */
export function labelStatements(db: Database.Database) {
  return {
    eventLabel: db.prepare('SELECT label FROM events WHERE id = ?').pluck(),
    setLabel: db.prepare('UPDATE events SET label = ? WHERE id = ?'),
    earliestText: db
      .prepare(
        `SELECT s.text FROM links l JOIN sentences s ON s.article_id = l.article_id AND s.idx = l.sentence_idx
        JOIN mentions m ON m.article_id = l.article_id AND m.sentence_idx = l.sentence_idx
        WHERE l.event_id = ? AND s.text IS NOT NULL ORDER BY m.published, l.article_id, l.sentence_idx LIMIT 1`,
      )
      .pluck(),
  };
}

/** A linked mention as stored, from a row of the mentions joined with its sentence. */
export function mentionOf(r: Row): LinkedMention['mention'] {
  return {
    articleId: r.article_id as string,
    sentenceIndex: r.sentence_idx as number,
    text: (r.text as string | null) ?? '',
    outlet: r.outlet as string,
    published: r.published as string,
    eventness: r.eventness as number,
    participants: JSON.parse(r.participants as string) as string[],
    places: JSON.parse(r.places as string) as string[],
    times: JSON.parse(r.times as string) as TimeExpression[],
    terms: [],
    isCopy: r.is_copy === 1,
    vector: r.vector ? decodeVector(r.vector as Buffer) : null,
  };
}

export const EVENT_SELECT = `SELECT e.id, e.label, e.first_seen, e.last_seen, e.time_start, e.time_end, e.participants, e.places, e.mention_count, e.version, e.story_id,
  (SELECT json_group_array(outlet) FROM (SELECT outlet FROM event_outlets eo WHERE eo.event_id = e.id ORDER BY outlet)) AS outlets,
  (SELECT count(*) FROM event_outlets eo WHERE eo.event_id = e.id) AS outlet_count,
  (SELECT count(*) FROM event_outlets eo WHERE eo.event_id = e.id AND eo.independent > 0) AS independent
  FROM events e`;

/** A LIKE pattern (ESCAPE '\\') matching `word` anywhere, its wildcards and escape taken as plain characters. */
export function likePattern(word: string): string {
  return `%${word.replace(/[\\%_]/g, (ch) => `\\${ch}`)}%`;
}

export function toSummary(r: Row): EventSummary {
  return {
    id: r.id as string,
    label: r.label as string,
    firstSeen: r.first_seen as string,
    lastSeen: r.last_seen as string,
    timeStart: r.time_start as string,
    timeEnd: r.time_end as string,
    participants: JSON.parse(r.participants as string) as string[],
    places: JSON.parse(r.places as string) as string[],
    outlets: JSON.parse(r.outlets as string) as string[],
    mentionCount: r.mention_count as number,
    version: r.version as number,
    story: (r.story_id as string | null) ?? null,
    independentOutlets: r.independent as number,
  };
}

export const STORY_SELECT = `SELECT s.id, s.label, s.first_seen, s.last_seen, s.article_count, s.names, s.version,
  (SELECT json_group_array(outlet) FROM (SELECT DISTINCT outlet FROM articles a WHERE a.story_id = s.id ORDER BY outlet)) AS outlets,
  (SELECT count(DISTINCT outlet) FROM articles a WHERE a.story_id = s.id) AS outlet_count,
  (SELECT count(DISTINCT outlet) FROM articles a WHERE a.story_id = s.id AND a.duplicate_of IS NULL) AS independent,
  (SELECT count(*) FROM events e WHERE e.story_id = s.id) AS event_count
  FROM stories s`;

export function toStorySummary(r: Row): StorySummary {
  return {
    id: r.id as string,
    label: r.label as string,
    firstSeen: r.first_seen as string,
    lastSeen: r.last_seen as string,
    articleCount: r.article_count as number,
    outlets: JSON.parse(r.outlets as string) as string[],
    names: JSON.parse(r.names as string) as string[],
    version: r.version as number,
    independentOutlets: r.independent as number,
    eventCount: r.event_count as number,
  };
}

export function toDelivery(r: Row): Delivery {
  return {
    messageId: r.message_id as string,
    subscriber: r.subscriber as string,
    type: r.type as string,
    body: r.body as string,
    created: r.created as string,
    attempts: r.attempts as number,
    nextAt: r.next_at as string,
    status: r.status as Delivery['status'],
    lastError: (r.last_error as string | null) ?? null,
    rule: (r.rule as string | null) ?? null,
    latencyMs: (r.latency_ms as number | null) ?? null,
  };
}
