import { describe, expect, it } from 'vitest';
import { TfidfEmbedder } from '../../src/embed/tfidf-embedder.js';
import { OnlineLinker, eventIdFor } from '../../src/link/online-linker.js';
import { buildMessages } from '../../src/notify/messages.js';
import { testConfig } from '../helpers/runtime.js';
import type { EmbeddedMention, TimeExpression } from '../../src/records.js';

const options = testConfig().link;

function mentions(
  embedder: TfidfEmbedder,
  specs: {
    article: string;
    terms: string[];
    published: string;
    outlet?: string;
    names?: string[];
    times?: TimeExpression[];
    refersBack?: boolean;
  }[],
): EmbeddedMention[] {
  embedder.learn(specs.map((s) => ({ text: '', terms: s.terms })));
  return specs.map((s, i) => ({
    articleId: s.article,
    sentenceIndex: i,
    text: s.terms.join(' '),
    outlet: s.outlet ?? 'Outlet A',
    published: s.published,
    eventness: 0.9,
    participants: s.names ?? [],
    places: [],
    times: s.times ?? [],
    terms: s.terms,
    isCopy: false,
    ...(s.refersBack ? { refersBack: true } : {}),
    vector: embedder.vector(s.terms),
  }));
}

describe('the online linker', () => {
  it('opens an event for a first mention, then attaches a similar one from another outlet', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker(options);
    const [a, b] = mentions(e, [
      { article: 'x1', terms: ['levee', 'breach', 'dunvessel', 'flood', 'town'], published: '2026-10-06T05:00:00Z' },
      { article: 'x2', terms: ['dunvessel', 'levee', 'breach', 'water', 'street'], published: '2026-10-06T09:00:00Z', outlet: 'Outlet B' },
    ]);
    const p1 = l.plan([a!]);
    expect(p1.opened).toEqual([eventIdFor(a!)]);
    expect(p1.links[0]!.evidence.opened).toBe(true);
    l.apply(p1);
    const p2 = l.plan([b!]);
    expect(p2.opened).toEqual([]);
    expect(p2.links[0]!.eventId).toBe(eventIdFor(a!));
    expect(p2.links[0]!.score).toBeGreaterThanOrEqual(options.threshold);
    expect(p2.outletsAdded).toEqual([expect.objectContaining({ eventId: eventIdFor(a!), outlet: 'Outlet B', independent: true })]);
  });

  it('opens a new event for an unrelated mention', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker(options);
    const [a, b] = mentions(e, [
      { article: 'x1', terms: ['levee', 'breach', 'dunvessel'], published: '2026-10-06T05:00:00Z' },
      { article: 'x2', terms: ['guild', 'strike', 'port', 'pay'], published: '2026-10-06T09:00:00Z' },
    ]);
    l.apply(l.plan([a!]));
    expect(l.plan([b!]).opened).toEqual([eventIdFor(b!)]);
  });

  it('weighs similarity down with the time gap: one half-life halves the score', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker({ ...options, threshold: 0 });
    const terms = ['orlin', 'bridge', 'span', 'collapse'];
    const [a, near, far] = mentions(e, [
      { article: 'x1', terms, published: '2026-10-11T08:00:00Z' },
      { article: 'x2', terms, published: '2026-10-11T09:00:00Z' },
      { article: 'x3', terms, published: '2026-10-19T09:00:00Z' },
    ]);
    l.apply(l.plan([a!]));
    const sNear = l.plan([near!]).links[0]!;
    const sFar = l.plan([far!]).links[0]!;
    expect(sNear.evidence.timeDecay).toBe(1);
    // The event spans 10-10..10-11 (day of publication and the day before); 10-19 is 7 days after.
    expect(sFar.evidence.timeGapDays).toBe(7);
    expect(sFar.evidence.timeDecay).toBeCloseTo(0.5, 10);
    expect(sFar.score).toBeCloseTo(sNear.score * 0.5, 6);
  });

  it('finds a weeks-old event from another story when a sentence names its date', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker(options);
    const first = mentions(e, [
      {
        article: 'flood-1',
        terms: ['levee', 'dunvessel', 'breach', 'veshel', 'river'],
        published: '2026-10-06T05:00:00Z',
        outlet: 'Outlet A',
      },
    ]);
    l.apply(l.plan(first));
    // Thirty unrelated events in between, from another story and outlet.
    for (let i = 0; i < 30; i++) {
      l.apply(
        l.plan(
          mentions(e, [
            { article: `other-${i}`, terms: [`topic${i}`, `word${i}`, 'budget'], published: '2026-10-20T09:00:00Z', outlet: 'Outlet C' },
          ]),
        ),
      );
    }
    const [back] = mentions(e, [
      {
        article: 'bridge-9',
        terms: ['report', 'levee', 'dunvessel', 'breach', 'scour'],
        published: '2026-10-29T10:00:00Z',
        outlet: 'Outlet B',
        times: [{ text: 'October 5', start: '2026-10-05', end: '2026-10-05' }],
      },
    ]);
    const plan = l.plan([back!]);
    expect(plan.links[0]!.eventId).toBe(eventIdFor(first[0]!));
    expect(plan.links[0]!.evidence.timeGapDays).toBe(0);
  });

  it('gives a sentence further links when several events fit it clearly', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker({ ...options, secondaryMargin: 0.05 });
    const [h1, h2, ruling] = mentions(e, [
      { article: 'a', terms: ['hearing', 'maskell', 'plead', 'bribery'], published: '2026-10-05T12:00:00Z' },
      { article: 'b', terms: ['hearing', 'gray', 'testify', 'list'], published: '2026-10-08T12:00:00Z' },
      {
        article: 'c',
        terms: ['ruling', 'hearing', 'maskell', 'plead', 'gray', 'testify', 'list', 'bribery'],
        published: '2026-10-09T12:00:00Z',
        times: [
          { text: 'October 5', start: '2026-10-05', end: '2026-10-05' },
          { text: 'October 8', start: '2026-10-08', end: '2026-10-08' },
        ],
      },
    ]);
    l.apply(l.plan([h1!]));
    l.apply(l.plan([h2!]));
    const plan = l.plan([ruling!]);
    expect(new Set(plan.links.map((x) => x.eventId))).toEqual(new Set([eventIdFor(h1!), eventIdFor(h2!)]));
    expect(plan.links.map((x) => x.rank).sort()).toEqual([0, 1]);
  });

  it('counts shared rare names as evidence', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker({ ...options, threshold: 0 });
    const [a, b] = mentions(e, [
      { article: 'a', terms: ['court', 'hearing'], published: '2026-10-05T12:00:00Z', names: ['Teodor Maskell'] },
      { article: 'b', terms: ['court', 'evidence'], published: '2026-10-05T13:00:00Z', names: ['Teodor Maskell'] },
    ]);
    l.apply(l.plan([a!]));
    const ev = l.plan([b!]).links[0]!.evidence;
    expect(ev.sharedParticipants).toEqual(['Teodor Maskell']);
    expect(ev.overlapBonus).toBeGreaterThan(0);
  });

  it('asks more of an event of another story, unless the two share a name', () => {
    const e = new TfidfEmbedder(16);
    const fixed = { ...options, threshold: 0.1, calibration: { ...options.calibration, mode: 'fixed' as const }, crossStoryMargin: 0.8 };
    const [opener, plain, named] = mentions(e, [
      { article: 'a', terms: ['warehouse', 'fire', 'korrin', 'pier'], published: '2026-10-07T22:00:00Z', names: ['Korrin Pier'] },
      { article: 'b', terms: ['warehouse', 'fire', 'korrin', 'smoke'], published: '2026-10-08T08:00:00Z' },
      { article: 'c', terms: ['warehouse', 'fire', 'korrin', 'smoke'], published: '2026-10-08T08:00:00Z', names: ['Korrin Pier'] },
    ]);
    const l = new OnlineLinker(fixed);
    l.apply(l.plan([opener!], 'st_fire'));
    // The same story: the plain threshold.
    const same = l.plan([plain!], 'st_fire').links[0]!;
    expect([same.eventId, same.evidence.crossStory, same.evidence.bar]).toEqual([eventIdFor(opener!), undefined, 0.1]);
    // Another story, no shared name: threshold + margin, out of reach here.
    expect(l.plan([plain!], 'st_other').opened).toEqual([eventIdFor(plain!)]);
    // Another story, a shared place: the plain threshold again, and the link says it crossed.
    const crossed = l.plan([named!], 'st_other').links[0]!;
    expect([crossed.eventId, crossed.evidence.crossStory, crossed.evidence.bar]).toEqual([eventIdFor(opener!), true, 0.1]);
    // A story merged into the event's own counts as the same story.
    const merged = l.plan([plain!], 'st_other', (id) => (id === 'st_fire' ? 'st_other' : id)).links[0]!;
    expect(merged.eventId).toBe(eventIdFor(opener!));
  });

  it('carries the calibration tally in each plan, and resumes with the threshold it had', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker(options);
    const ms = mentions(
      e,
      Array.from({ length: 12 }, (_, i) => ({
        article: `a${i}`,
        terms: ['levee', 'breach', i % 3 ? 'dunvessel' : `place${i}`],
        published: '2026-10-05T12:00:00Z',
      })),
    );
    const tally = { mentions: 0, high: 0 };
    for (const m of ms) {
      const p = l.plan([m]);
      expect(p.tally.mentions).toBe(1);
      tally.mentions += p.tally.mentions;
      tally.high += p.tally.high;
      l.apply(p);
    }
    expect(tally.high).toBeGreaterThan(0);
    const resumed = new OnlineLinker(options);
    resumed.load([], tally);
    expect(resumed.threshold).toBe(l.threshold);
    expect(l.threshold).not.toBe(new OnlineLinker(options).threshold);
  });

  it('changes nothing until a plan is applied', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker(options);
    const [a] = mentions(e, [{ article: 'a', terms: ['x', 'y'], published: '2026-10-05T12:00:00Z' }]);
    l.plan([a!]);
    expect(l.size).toBe(0);
    const again = l.plan([a!]);
    l.apply(again);
    expect(l.size).toBe(1);
  });

  it('consolidates two events that turn out to be one, and only those', () => {
    const e = new TfidfEmbedder(16);
    // A zero threshold opens a new event for each mention only if nothing matches; force
    // two events for one happening by linking the second article with a strict threshold.
    const strict = new OnlineLinker({ ...options, threshold: 0.99 });
    const [a, b, c] = mentions(e, [
      { article: 'a', terms: ['warehouse', 'fire', 'korrin', 'bay', 'blaze'], published: '2026-10-07T22:00:00Z' },
      { article: 'b', terms: ['warehouse', 'fire', 'korrin', 'bay', 'night'], published: '2026-10-08T08:00:00Z' },
      { article: 'c', terms: ['budget', 'vote', 'assembly'], published: '2026-10-08T09:00:00Z' },
    ]);
    for (const m of [a!, b!, c!]) strict.apply(strict.plan([m]));
    expect(strict.size).toBe(3);
    const merges = strict.planMerges([eventIdFor(b!), eventIdFor(c!)], 0.4);
    expect(merges).toEqual([{ into: eventIdFor(a!), from: eventIdFor(b!), score: expect.any(Number) }]);
    const merged = strict.mergedState(merges[0]!.into, merges[0]!.from);
    expect(merged.mentionCount).toBe(2);
    strict.applyMerge(merged, merges[0]!.from);
    expect(strict.size).toBe(2);
    // The absorbed event is no longer a candidate: a new mention joins the survivor.
    const [d] = mentions(e, [{ article: 'd', terms: ['warehouse', 'fire', 'korrin', 'bay'], published: '2026-10-08T10:00:00Z' }]);
    const lenient = strict.plan([d!]);
    expect(lenient.links.map((l) => l.eventId)).not.toContain(eventIdFor(b!));
  });

  it('opens the same event id for the same mention every time', () => {
    expect(eventIdFor({ articleId: 'https://x.example/a', sentenceIndex: 3 })).toBe(
      eventIdFor({ articleId: 'https://x.example/a', sentenceIndex: 3 }),
    );
    expect(eventIdFor({ articleId: 'https://x.example/a', sentenceIndex: 3 })).toMatch(/^ev_[0-9a-f]{16}$/);
  });
});

describe('back-references ("the move")', () => {
  // Nothing joins at this threshold, so every sentence opens its own event and any further
  // link below comes from the back-reference alone.
  const strict = { ...options, threshold: 0.95, calibration: { ...options.calibration, mode: 'fixed' as const } };
  const article = (linker: OnlineLinker, refersBack: boolean) => {
    const e = new TfidfEmbedder(16);
    const [closure, strike, move] = mentions(e, [
      { article: 'x1', terms: ['council', 'close', 'orlin', 'bridge'], published: '2026-10-06T05:00:00Z' },
      { article: 'x1', terms: ['guild', 'strike', 'port', 'pay'], published: '2026-10-06T05:00:00Z' },
      { article: 'x1', terms: ['move', 'anger', 'trader', 'bridge'], published: '2026-10-06T05:00:00Z', refersBack },
    ]);
    return { closure: closure!, strike: strike!, move: move!, plan: linker.plan([closure!, strike!, move!]) };
  };

  it('links the sentence also to the earlier event of its article it shares most with', () => {
    const { closure, move, plan } = article(new OnlineLinker(strict), true);
    const links = plan.links.filter((x) => x.sentenceIndex === move.sentenceIndex);
    expect(links.map((x) => [x.eventId, x.rank])).toEqual([
      [eventIdFor(move), 0],
      [eventIdFor(closure), 1],
    ]);
    expect(links[1]!.evidence).toMatchObject({ refersBack: true, opened: false });
    expect(links[1]!.score).toBeGreaterThan(0);
  });

  it('leaves the event referred to as it was: not a mention of it, no weight in its centroid', () => {
    const { closure, plan } = article(new OnlineLinker(strict), true);
    const without = article(new OnlineLinker(strict), false).plan;
    const state = (p: typeof plan) => p.events.find((x) => x.id === eventIdFor(closure))!;
    expect(state(plan).mentionCount).toBe(1);
    expect([...state(plan).sparse]).toEqual([...state(without).sparse]);
    expect(plan.outletsAdded).toEqual([]);
  });

  it('makes no such link when the sentence does not point back, or when turned off', () => {
    for (const { plan } of [
      article(new OnlineLinker(strict), false),
      article(new OnlineLinker({ ...strict, backReferences: false }), true),
    ])
      expect(plan.links.every((x) => x.rank === 0 && !x.evidence.refersBack)).toBe(true);
  });

  it('looks only at what its own article told, never at an earlier article', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker(strict);
    const [closure, move] = mentions(e, [
      { article: 'x1', terms: ['council', 'close', 'orlin', 'bridge'], published: '2026-10-06T05:00:00Z' },
      { article: 'x2', terms: ['move', 'anger', 'trader', 'bridge'], published: '2026-10-06T07:00:00Z', refersBack: true },
    ]);
    l.apply(l.plan([closure!]));
    expect(l.plan([move!]).links.map((x) => x.eventId)).toEqual([eventIdFor(move!)]);
  });

  it('does not count a back-reference among the mentions an article added to a known event', () => {
    const e = new TfidfEmbedder(16);
    const l = new OnlineLinker({ ...strict, threshold: 0.5 });
    const terms = ['council', 'close', 'orlin', 'bridge'];
    const [first, again, move] = mentions(e, [
      { article: 'x0', terms, published: '2026-10-06T05:00:00Z' },
      { article: 'x1', terms, published: '2026-10-06T07:00:00Z' },
      { article: 'x1', terms: ['move', 'anger', 'trader', 'bridge'], published: '2026-10-06T07:00:00Z', refersBack: true },
    ]);
    l.apply(l.plan([first!]));
    const plan = l.plan([again!, move!]);
    expect(plan.links.filter((x) => x.eventId === eventIdFor(first!)).map((x) => x.evidence.refersBack === true)).toEqual([false, true]);
    const linked = buildMessages(plan, [again!, move!], new Date('2026-10-06T07:00:00Z')).find((m) => m.type === 'article.linked')!;
    expect(JSON.parse(linked.body).data.events).toEqual([
      expect.objectContaining({ id: eventIdFor(first!), mentionCount: 2, mentionsAdded: 1 }),
    ]);
  });

  it('needs something shared: an earlier event scoring 0 is not referred to', () => {
    const e = new TfidfEmbedder(16);
    const [strike, move] = mentions(e, [
      { article: 'x1', terms: ['guild', 'strike', 'port', 'pay'], published: '2026-10-06T05:00:00Z' },
      { article: 'x1', terms: ['move', 'anger', 'trader', 'bridge'], published: '2026-10-06T05:00:00Z', refersBack: true },
    ]);
    expect(new OnlineLinker(strict).plan([strike!, move!]).links.filter((x) => x.sentenceIndex === 1)).toHaveLength(1);
  });
});
