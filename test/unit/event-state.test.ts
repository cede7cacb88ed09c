import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { TfidfEmbedder } from '../../src/embed/tfidf-embedder.js';
import {
  addMention,
  deserialiseEvent,
  linkWeight,
  mentionSpan,
  mergeStates,
  nameKey,
  openEvent,
  removeMention,
  serialiseEvent,
  toRecord,
  topNames,
} from '../../src/link/event-state.js';
import type { EmbeddedMention } from '../../src/records.js';

const e = new TfidfEmbedder(16);
const m = (over: Partial<EmbeddedMention>): EmbeddedMention => ({
  articleId: 'a',
  sentenceIndex: 0,
  text: 'The levee failed.',
  outlet: 'O',
  published: '2026-10-06T05:00:00Z',
  eventness: 0.9,
  participants: ['Marek Tavish'],
  places: ['Dunvessel'],
  times: [],
  terms: ['levee', 'fail'],
  isCopy: false,
  vector: e.vector(['levee', 'fail']),
  ...over,
});

describe('event state', () => {
  it('places an undated mention on its publication day and the day before', () => {
    const [s, t] = mentionSpan(m({}));
    expect(t - s).toBe(1);
    expect(new Date(t * 86_400_000).toISOString().slice(0, 10)).toBe('2026-10-06');
  });

  it('ignores stated times more than a year from publication (background)', () => {
    expect(mentionSpan(m({ times: [{ text: 'in 2017', start: '2017-01-01', end: '2017-12-31' }] }))).toEqual(mentionSpan(m({})));
  });

  it('moves the span only for stated times', () => {
    const ev = openEvent('ev_1', m({}));
    addMention(ev, m({ published: '2026-10-20T00:00:00Z' }), 1, 300);
    expect(toRecord(ev).timeEnd).toBe('2026-10-06');
    addMention(
      ev,
      m({ published: '2026-10-20T00:00:00Z', times: [{ text: 'October 5', start: '2026-10-05', end: '2026-10-05' }] }),
      1,
      300,
    );
    expect([toRecord(ev).timeStart, toRecord(ev).timeEnd]).toEqual(['2026-10-05', '2026-10-05']);
  });

  it('keeps outlets apart from verbatim copies', () => {
    const ev = openEvent('ev_1', m({}));
    addMention(ev, m({}), 1, 300);
    addMention(ev, m({ outlet: 'Copier', isCopy: true }), 1, 300);
    expect([...ev.outlets]).toEqual([
      ['O', [1, 1]],
      ['Copier', [1, 0]],
    ]);
  });

  it('round-trips through its binary form exactly, all but the label (a sentence, kept by the store alone)', () => {
    const ev = openEvent('ev_1', m({}));
    addMention(ev, m({}), 1, 300);
    addMention(ev, m({ terms: ['dam', 'burst'], vector: e.vector(['dam', 'burst']), participants: ['Colonel Ysolde Brand'] }), 0.5, 300);
    const bytes = serialiseEvent(ev);
    expect(deserialiseEvent(bytes)).toEqual({ ...ev, label: '' });
    expect(bytes.toString('utf8')).not.toContain(ev.label);
  });

  it('counts a sentence linked to both of two merged events once: the merge with its dropped link taken out equals the events built without it', () => {
    const shared = m({
      articleId: 's',
      outlet: 'P',
      terms: ['levee', 'breach'],
      vector: e.vector(['levee', 'breach']),
      participants: ['Ila Serrow'],
    });
    const a1 = m({ articleId: 'a1' });
    const b1 = m({
      articleId: 'b1',
      outlet: 'Q',
      terms: ['flood', 'dunvessel'],
      vector: e.vector(['flood', 'dunvessel']),
      places: ['Dunvessel'],
    });
    const into = openEvent('ev_a', a1);
    addMention(into, a1, 1, 300);
    addMention(into, shared, 1, 300);
    const from = openEvent('ev_b', b1);
    addMention(from, b1, 1, 300);
    addMention(from, shared, 0.5, 300);
    const merged = mergeStates(into, from, 300);
    expect(merged.mentionCount).toBe(4);
    removeMention(merged, shared, 0.5);
    const expected = openEvent('ev_a', a1);
    for (const x of [a1, shared, b1]) addMention(expected, x, 1, 300);
    expect(merged.mentionCount).toBe(3);
    expect(merged.outlets).toEqual(expected.outlets);
    expect(merged.participants).toEqual(expected.participants);
    expect(merged.places).toEqual(expected.places);
    expect([...merged.sparse.keys()].sort()).toEqual([...expected.sparse.keys()].sort());
    for (const [f, w] of expected.sparse) expect(merged.sparse.get(f)).toBeCloseTo(w, 6);
    expect(merged.norm).toBeCloseTo(expected.norm, 6);
  });

  it('weighs a best link 1, a further link half and a back-reference nothing', () => {
    expect([linkWeight({ rank: 0 }), linkWeight({ rank: 1 }), linkWeight({ rank: 2, refersBack: true })]).toEqual([1, 0.5, 0]);
    const ev = openEvent('ev_a', m({}));
    addMention(ev, m({}), 1, 300);
    const before = serialiseEvent(ev);
    const back = m({ articleId: 'b', outlet: 'P', terms: ['move'], vector: e.vector(['move']), participants: ['Ila Serrow'] });
    addMention(ev, back, 0, 300);
    removeMention(ev, back, 0);
    expect(serialiseEvent(ev)).toEqual(before);
  });

  it('matches names without articles or possessives', () => {
    expect(nameKey("The Vellmouth Port Authority's")).toBe('vellmouth port authority');
  });

  it('lists the most mentioned names as sorting every name would: count descending, then locale order, first seen on a full tie', () => {
    const names = fc.array(
      fc.tuple(fc.constantFrom('Ana', 'ana', 'Bo', 'Émile', 'Emile', 'Zed', 'Ödön', 'Obi', 'Lu'), fc.integer({ min: 1, max: 4 })),
      {
        maxLength: 40,
      },
    );
    fc.assert(
      fc.property(names, fc.integer({ min: 0, max: 12 }), (pairs, n) => {
        const map = new Map(pairs.map(([name, count], i) => [`${name}${i % 3}`, [name, count] as const]));
        const sorted = [...map.values()]
          .sort((a, b) => b[1] - a[1] || a[0].localeCompare(b[0]))
          .slice(0, n)
          .map((x) => x[0]);
        expect(topNames(map, n)).toEqual(sorted);
      }),
      { numRuns: 300 },
    );
  });
});
