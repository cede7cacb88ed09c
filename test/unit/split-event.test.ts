import { describe, expect, it } from 'vitest';
import { TfidfEmbedder } from '../../src/embed/tfidf-embedder.js';
import { addMention, openEvent } from '../../src/link/event-state.js';
import { OnlineLinker, eventIdFor } from '../../src/link/online-linker.js';
import { planSplit, splitEventId } from '../../src/link/split-event.js';
import type { EmbeddedMention } from '../../src/records.js';
import { testConfig } from '../helpers/runtime.js';

// Lenient linking so that a chain can form; splitting examines events of four or more.
const options = { ...testConfig().link, threshold: 0.1, splitThreshold: 0.2, splitMinMentions: 4 };

const FIRE = ['warehouse', 'fire', 'korrin', 'blaze', 'smoke', 'crews'];
const STRIKE = ['dockworkers', 'strike', 'ballot', 'wages', 'guild', 'pier'];

function stream(specs: { article: string; terms: string[]; published?: string }[]): EmbeddedMention[] {
  const e = new TfidfEmbedder(16);
  e.learn(specs.map((s) => ({ text: '', terms: s.terms })));
  return specs.map((s) => ({
    articleId: s.article,
    sentenceIndex: 0,
    text: s.terms.join(' '),
    outlet: 'Outlet A',
    published: s.published ?? '2026-10-07T10:00:00Z',
    eventness: 0.9,
    participants: [],
    places: [],
    times: [],
    terms: s.terms,
    isCopy: false,
    vector: e.vector(s.terms),
  }));
}

/** A fire story that drifts, through one sentence naming both, into a strike story. */
function drifted(): EmbeddedMention[] {
  return stream([
    { article: 'f1', terms: FIRE },
    { article: 'f2', terms: FIRE.slice(0, 5) },
    { article: 'f3', terms: FIRE.slice(1) },
    { article: 'bridge', terms: [...FIRE.slice(0, 3), ...STRIKE.slice(0, 3)] },
    { article: 's1', terms: [FIRE[0]!, ...STRIKE] },
    { article: 's2', terms: STRIKE.slice(0, 5) },
    { article: 's3', terms: STRIKE.slice(1) },
  ]);
}

function chained(ms: readonly EmbeddedMention[]): OnlineLinker {
  const l = new OnlineLinker(options);
  for (const m of ms) l.apply(l.plan([m]));
  return l;
}

describe('splitting a drifted event', () => {
  it('finds the two stories an event chained together and keeps the opener with the first', () => {
    const ms = drifted();
    const l = chained(ms);
    expect(l.size).toBe(1);
    const id = eventIdFor(ms[0]!);
    const plan = l.planSplit(
      id,
      ms.map((mention) => ({ mention, rank: 0 })),
    );
    expect(plan).not.toBeNull();
    expect(plan!.kept.id).toBe(id);
    expect(plan!.score).toBeLessThan(options.splitThreshold);
    expect(plan!.moved.map((m) => m.articleId).sort()).toEqual(['s1', 's2', 's3']);
    expect(plan!.split.id).toBe(splitEventId(id, ms[4]!));
    expect(plan!.kept.mentionCount + plan!.split.mentionCount).toBe(ms.length);
  });

  it('leaves back-references out of the examination: they weigh nothing in the event and stay where they are', () => {
    const ms = drifted();
    const l = chained(ms);
    const id = eventIdFor(ms[0]!);
    const members = ms.map((mention) => ({ mention, rank: 0 }));
    const [back] = stream([{ article: 'z', terms: STRIKE }]);
    // Each plan takes the next touch number; all else must be the same.
    const untouched = (p: ReturnType<typeof l.planSplit>) =>
      p && { ...p, kept: { ...p.kept, touched: 0 }, split: { ...p.split, touched: 0 } };
    const plain = untouched(l.planSplit(id, members));
    const withBack = untouched(l.planSplit(id, [...members, { mention: back!, rank: 1, refersBack: true }]));
    expect(plain).not.toBeNull();
    expect(withBack).toEqual(plain);
  });

  it('after the split a new strike sentence joins the split-off event, not the fire', () => {
    const ms = drifted();
    const l = chained(ms);
    const plan = l.planSplit(
      eventIdFor(ms[0]!),
      ms.map((mention) => ({ mention, rank: 0 })),
    )!;
    l.applySplit(plan);
    expect(l.size).toBe(2);
    const [late] = stream([...ms.map((m) => ({ article: m.articleId, terms: m.terms })), { article: 's4', terms: STRIKE }]).slice(-1);
    expect(l.plan([late!]).links[0]!.eventId).toBe(plan.split.id);
  });

  it('leaves a coherent event whole', () => {
    const ms = stream(['a', 'b', 'c', 'd', 'e', 'f'].map((article, i) => ({ article, terms: FIRE.filter((_, k) => k !== i) })));
    const l = chained(ms);
    expect(l.size).toBe(1);
    expect(
      l.planSplit(
        eventIdFor(ms[0]!),
        ms.map((mention) => ({ mention, rank: 0 })),
      ),
    ).toBeNull();
  });

  it('does not split off a single stray sentence, nor examine small events', () => {
    const ms = drifted().slice(0, 5);
    const l = chained(ms);
    expect(
      l.planSplit(
        eventIdFor(ms[0]!),
        ms.map((mention) => ({ mention, rank: 0 })),
      ),
    ).toBeNull();
    expect(l.splitCandidates([eventIdFor(ms[0]!)])).toEqual([eventIdFor(ms[0]!)]);
    const small = chained(drifted().slice(0, 3));
    expect(small.splitCandidates([eventIdFor(ms[0]!)])).toEqual([]);
  });

  it('examines an event again only once it has grown by half (and by splitMinMentions)', () => {
    const fire = stream(Array.from({ length: 16 }, (_, i) => ({ article: `f${i}`, terms: FIRE.filter((_, k) => k !== i % FIRE.length) })));
    const l = chained(fire.slice(0, 4));
    const id = eventIdFor(fire[0]!);
    expect(l.splitCandidates([id])).toEqual([id]);
    expect(l.splitCandidates([id])).toEqual([]);
    for (const m of fire.slice(4, 7)) l.apply(l.plan([m]));
    expect(l.splitCandidates([id])).toEqual([]);
    l.apply(l.plan([fire[7]!]));
    expect(l.splitCandidates([id])).toEqual([id]);
    for (const m of fire.slice(8, 11)) l.apply(l.plan([m]));
    expect(l.splitCandidates([id])).toEqual([]);
    l.apply(l.plan([fire[11]!]));
    expect(l.splitCandidates([id])).toEqual([id]);
  });

  it('gives the same answer for the same mentions (every process reaches the same split)', () => {
    const ms = drifted();
    const a = chained(ms).planSplit(
      eventIdFor(ms[0]!),
      ms.map((mention) => ({ mention, rank: 0 })),
    );
    const b = chained(ms).planSplit(
      eventIdFor(ms[0]!),
      ms.map((mention) => ({ mention, rank: 0 })),
    );
    expect(b).toEqual(a);
  });

  it('is off when splitMinMentions is 0', () => {
    const ms = drifted();
    const e = openEvent(eventIdFor(ms[0]!), ms[0]!);
    for (const m of ms) addMention(e, m, 1, options.centroidTerms);
    expect(
      planSplit(
        e,
        ms.map((mention) => ({ mention, rank: 0 })),
        options,
      ),
    ).not.toBeNull();
    expect(
      planSplit(
        e,
        ms.map((mention) => ({ mention, rank: 0 })),
        { ...options, splitMinMentions: 0 },
      ),
    ).toBeNull();
  });
});
