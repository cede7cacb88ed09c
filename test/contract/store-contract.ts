/**
 * The Store contract suite: every Store implementation must pass it unchanged.
 * Call describeStoreContract with a factory that opens an empty store.
 */
import { stateWithLabel } from '../helpers/legacy-state.js';
import { canonicalUrl } from '../../src/ingest/canonical-url.js';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { TfidfEmbedder } from '../../src/embed/tfidf-embedder.js';
import {
  addMention,
  deserialiseEvent,
  mergeStates,
  outletRows,
  openEvent,
  serialiseEvent,
  toRecord,
  type EventState,
} from '../../src/link/event-state.js';
import { type StoryState, addArticle, mergeStories, openStory, serialiseStory, storyRecord } from '../../src/link/story-state.js';
import type { Article, EmbeddedMention, Link, LinkEvidence } from '../../src/records.js';
import {
  type ArticleCommit,
  type EventUpdate,
  type OutboxMessage,
  type Store,
  type Subscription,
  newFeedState,
  type EventQuery,
  type ReviewRound,
  type StoryQuery,
} from '../../src/store/store.js';
import { EVERYTHING } from '../../src/notify/alert-rules.js';
import { activeBinds, applyCorrection } from '../../src/link/corrections.js';
import { consolidate } from '../../src/link/consolidate.js';
import { createRuntime, type Runtime } from '../../src/runtime.js';
import { createLogger } from '../../src/logger.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { runArticles, testConfig } from '../helpers/runtime.js';

const embedder = new TfidfEmbedder(16);

function article(id: string, outlet: string, published: string, text: string, hash = `hash-${id}`): Article {
  return {
    id,
    outlet,
    url: `https://${outlet.toLowerCase().replace(/\W+/g, '')}.example/${id}`,
    title: `Title ${id}`,
    published,
    fetched: published,
    language: 'en',
    text,
    contentHash: hash,
    duplicateOf: null,
    source: 'test',
  };
}

function mention(a: Article, index: number, text: string, isCopy = false): EmbeddedMention {
  const terms = text.toLowerCase().split(/\W+/).filter(Boolean);
  return {
    articleId: a.id,
    sentenceIndex: index,
    text,
    outlet: a.outlet,
    published: a.published!,
    eventness: 0.8,
    participants: ['Vellmouth Port Authority'],
    places: ['Korrin Bay'],
    times: [],
    terms,
    isCopy,
    vector: embedder.vector(terms),
  };
}

/** A commit of one article whose single sentence opens or joins `event` (filed under `story` when given, which it joins). */
/** A subscription named `name` for the contract's delivery cases (made when missing). */
function subscription(name: string, created = '2026-10-01T00:00:00.000Z'): Subscription {
  return {
    name,
    url: `https://${name}.example/hook`,
    secret: `whsec_${'A'.repeat(32)}`,
    previous: null,
    rules: [EVERYTHING],
    paused: false,
    origin: 'api',
    created,
  };
}

/** Queues deliveries of these notifications to `name` as the dispatcher's fan-out would, up to the end of the log. */
async function fanOutTo(store: Store, name: string, ids: readonly string[], now: string): Promise<void> {
  let at = (await store.listSubscriptions()).find((x) => x.name === name)?.cursor;
  if (at === undefined) {
    await store.addSubscription(subscription(name), 0);
    at = 0;
  }
  const { last } = await store.notificationsAfter(0, 1);
  expect(
    await store.fanOut(
      name,
      at,
      last,
      ids.map((messageId) => ({ messageId, rule: 'everything' })),
      now,
    ),
  ).toBe(true);
}

function commitFor(
  a: Article,
  text: string,
  event: EventState | null,
  opts: { isCopy?: boolean; messages?: ArticleCommit['messages']; story?: StoryState; participants?: string[]; places?: string[] } = {},
): { commit: ArticleCommit; event: EventState } {
  const m = mention(a, 0, text, opts.isCopy);
  if (opts.participants) m.participants = opts.participants;
  if (opts.places) m.places = opts.places;
  const e = event ?? openEvent(`ev_${a.id}`, m);
  if (!event && opts.story) e.story = opts.story.id;
  if (opts.story)
    addArticle(
      opts.story,
      {
        id: a.id,
        title: a.title,
        outlet: a.outlet,
        published: a.published!,
        vector: m.vector,
        names: [...m.participants, ...m.places],
        isCopy: Boolean(opts.isCopy),
      },
      300,
    );
  addMention(e, m, 1, 300);
  const link: Link = {
    articleId: a.id,
    sentenceIndex: 0,
    eventId: e.id,
    score: event ? 0.42 : 0.8,
    rank: 0,
    evidence: {
      similarity: event ? 0.4 : 1,
      timeDecay: 1,
      timeGapDays: 0,
      sharedParticipants: [],
      sharedPlaces: ['Korrin Bay'],
      overlapBonus: 0.02,
      opened: !event,
    },
  };
  return {
    event: e,
    commit: {
      article: a,
      canonicalUrl: canonicalUrl(a.url),
      sentences: [
        { index: 0, text, start: 0, end: text.length, eventness: 0.8 },
        { index: 1, text: 'Background only.', start: text.length + 1, end: text.length + 17, eventness: 0.1 },
      ],
      mentions: [m],
      links: [link],
      events: [update(e)],
      idf: {
        docs: 2,
        df: new Map([
          [7, 1],
          [9, 2],
        ]),
      },
      messages: opts.messages ?? [],
      ...(opts.story
        ? {
            storyId: opts.story.id,
            story: { record: storyRecord(opts.story), state: serialiseStory(opts.story) },
            storyInput: { vector: m.vector, names: [...m.participants, ...m.places] },
          }
        : {}),
    },
  };
}

/** Three articles linked into one event that drifted: a fire at a pier, then a strike there (for splits). */
async function fireThenStrike(
  store: Store,
): Promise<{ first: ReturnType<typeof commitFor>; second: ReturnType<typeof commitFor>; third: ReturnType<typeof commitFor> }> {
  const first = commitFor(article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'x'), 'A fire destroyed a warehouse.', null);
  await store.commitArticle(first.commit);
  const second = commitFor(
    article('a2', 'EBS News', '2026-10-08T08:00:00.000Z', 'y'),
    'Dockworkers voted to strike.',
    deserialiseEvent(serialiseEvent(first.event)),
  );
  await store.commitArticle(second.commit);
  const third = commitFor(
    article('a3', 'EBS News', '2026-10-09T08:00:00.000Z', 'z'),
    'The strike closed the pier.',
    deserialiseEvent(serialiseEvent(second.event)),
  );
  await store.commitArticle(third.commit);
  return { first, second, third };
}

/**
 * A commit of one article opening one event whose state is written as earlier versions
 * wrote it, with `label` in its header (for the backends' migration tests).
 */
export function commitWithLabelledState(id: string, label: string): ArticleCommit {
  const { commit, event } = commitFor(article(id, 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', label), label, null);
  return { ...commit, events: [{ ...commit.events[0]!, state: stateWithLabel(event, label) }] };
}

/** An event's state as a commit writes it (consolidation's own outlet rows). */
/** A further link (rank 1) of `article`'s first sentence to `eventId`, as the linker would make it. */
function furtherLink(article: string, eventId: string, score: number, more: Partial<LinkEvidence> = {}): Link {
  return {
    articleId: article,
    sentenceIndex: 0,
    eventId,
    score,
    rank: 1,
    evidence: {
      similarity: score,
      timeDecay: 1,
      timeGapDays: 0,
      sharedParticipants: [],
      sharedPlaces: [],
      overlapBonus: 0,
      opened: false,
      ...more,
    },
  };
}

function update(e: EventState): EventUpdate {
  return { record: toRecord(e), outlets: outletRows(e), state: serialiseEvent(e) };
}

/** A commit of one article opening one event (for store-specific tests). */
export function commitFixture(id: string): ArticleCommit {
  return commitFor(
    article(id, 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'A fire destroyed a warehouse.'),
    'A fire destroyed a warehouse.',
    null,
  ).commit;
}

/** Registers the contract tests for one Store implementation. */
export function describeStoreContract(name: string, open: () => Promise<Store>): void {
  describe(`${name} (Store contract)`, () => {
    let store: Store;
    beforeEach(async () => {
      store = await open();
    });
    afterEach(async () => {
      await store.close();
    });

    it('stores an article with its sentences, mentions, links and event in one commit', async () => {
      const a = article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'A fire destroyed a warehouse at Korrin Bay.');
      const { commit, event } = commitFor(a, 'A fire destroyed a warehouse at Korrin Bay.', null);
      expect(await store.commitArticle(commit)).toBe('stored');
      expect(await store.hasArticle('a1')).toBe(true);
      expect(await store.findByContentHash('hash-a1')).toBe('a1');
      expect(await store.counts()).toEqual({ articles: 1, sentences: 2, mentions: 1, links: 1, events: 1, stories: 0 });
      const detail = await store.getArticle('a1');
      expect(detail!.article.text).toBe(a.text);
      expect(detail!.sentences.map((s) => [s.index, s.isMention, s.links.map((l) => l.eventId)])).toEqual([
        [0, true, [event.id]],
        [1, false, []],
      ]);
      expect(detail!.sentences[0]!.links[0]!.evidence.opened).toBe(true);
    });

    it('changes nothing when the same article is committed again', async () => {
      const a = article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'x');
      const { commit } = commitFor(a, 'A fire destroyed a warehouse.', null);
      await store.commitArticle(commit);
      expect(await store.commitArticle(commit)).toBe('already-stored');
      expect(await store.counts()).toEqual({ articles: 1, sentences: 2, mentions: 1, links: 1, events: 1, stories: 0 });
      expect((await store.loadLinkerState()).idf.docs).toBe(2);
    });

    it('commits several articles in one transaction, each once', async () => {
      const a1 = article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x');
      const a2 = article('a2', 'O', '2026-10-05T11:00:00.000Z', 'y');
      expect(
        await store.commitArticles([commitFor(a1, 'The levee failed.', null).commit, commitFor(a2, 'A bridge fell.', null).commit]),
      ).toEqual(['stored', 'stored']);
      expect(await store.commitArticles([commitFor(a2, 'A bridge fell.', null).commit])).toEqual(['already-stored']);
      expect((await store.counts()).articles).toBe(2);
    });

    it('owes a consolidation pass from the commit that makes it due until a pass at or after it is settled', async () => {
      const a = ['a1', 'a2', 'a3'].map((id, k) => article(id, 'O', `2026-10-05T1${k}:00:00.000Z`, id));
      expect(await store.consolidationOwed()).toBeNull();
      await store.commitArticles([
        commitFor(a[0]!, 'The levee failed.', null).commit,
        { ...commitFor(a[1]!, 'A bridge fell.', null).commit, consolidationDue: true },
      ]);
      expect(await store.consolidationOwed()).toBe(2);
      // A due commit of an article already stored owes nothing new.
      await store.commitArticles([{ ...commitFor(a[0]!, 'The levee failed.', null).commit, consolidationDue: true }]);
      expect(await store.consolidationOwed()).toBe(2);
      await store.settleConsolidation(1);
      expect(await store.consolidationOwed()).toBe(2);
      await store.settleConsolidation(2);
      expect(await store.consolidationOwed()).toBeNull();
      await store.commitArticles([{ ...commitFor(a[2]!, 'A dam held.', null).commit, consolidationDue: true }]);
      expect(await store.consolidationOwed()).toBe(3);
    });

    it('gives an event its mentions from every outlet, oldest first, with evidence', async () => {
      const a1 = article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'x');
      const a2 = article('a2', 'EBS News', '2026-10-08T08:00:00.000Z', 'y');
      const first = commitFor(a1, 'A fire destroyed a warehouse at Korrin Bay.', null);
      await store.commitArticle(first.commit);
      const copy = deserialiseEvent(serialiseEvent(first.event));
      await store.commitArticle(commitFor(a2, 'Two firefighters were hurt in the Korrin Bay blaze.', copy).commit);
      const d = await store.getEvent(first.event.id);
      expect(d!.event.outlets).toEqual(['EBS News', 'The Vellmouth Courier']);
      expect(d!.event.mentionCount).toBe(2);
      expect(d!.event.independentOutlets).toBe(2);
      expect(d!.mentions.map((m) => [m.outlet, m.score, m.evidence.sharedPlaces])).toEqual([
        ['The Vellmouth Courier', 0.8, ['Korrin Bay']],
        ['EBS News', 0.42, ['Korrin Bay']],
      ]);
      expect(d!.mentions[0]!.articleUrl).toBe('https://thevellmouthcourier.example/a1');
      expect(await store.getEvent('ev_missing')).toBeNull();
      expect(await store.getArticle('missing')).toBeNull();
    });

    it('counts an outlet whose only mentions are verbatim copies as not independent', async () => {
      const a1 = article('a1', 'Northwire', '2026-10-06T09:00:00.000Z', 'x');
      const a2 = article('a2', 'Quarrenby Post', '2026-10-06T10:00:00.000Z', 'x');
      const first = commitFor(a1, 'Lisk was evacuated.', null);
      await store.commitArticle(first.commit);
      await store.commitArticle(
        commitFor(a2, 'Lisk was evacuated.', deserialiseEvent(serialiseEvent(first.event)), { isCopy: true }).commit,
      );
      const d = await store.getEvent(first.event.id);
      expect(d!.event.outlets).toHaveLength(2);
      expect(d!.event.independentOutlets).toBe(1);
      expect(d!.mentions.map((m) => m.isCopy)).toEqual([false, true]);
    });

    describe('listing events', () => {
      beforeEach(async () => {
        const a1 = article('a1', 'The Vellmouth Courier', '2026-10-05T10:00:00.000Z', 'x');
        const a2 = article('a2', 'EBS News', '2026-10-12T10:00:00.000Z', 'y');
        const a3 = article('a3', 'Northwire', '2026-10-12T12:00:00.000Z', 'z');
        const first = commitFor(a1, 'The levee at Dunvessel failed overnight.', null);
        await store.commitArticle(first.commit);
        await store.commitArticle(commitFor(a2, 'A span of the Orlin Bridge fell into the river, 50% of it.', null).commit);
        await store.commitArticle(
          commitFor(a3, 'The levee breach flooded Dunvessel.', deserialiseEvent(serialiseEvent(first.event))).commit,
        );
      });

      it('lists most recently active first, with totals and paging', async () => {
        const page = await store.listEvents({ limit: 1, offset: 0 });
        expect(page.total).toBe(2);
        expect(page.events.map((e) => e.id)).toEqual(['ev_a1']);
        expect((await store.listEvents({ limit: 1, offset: 1 })).events.map((e) => e.id)).toEqual(['ev_a2']);
      });

      it('filters by outlet, by words, by time and by outlet count', async () => {
        expect((await store.listEvents({ outlet: 'EBS News', limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a2']);
        expect((await store.listEvents({ text: 'dunvessel LEVEE', limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a1']);
        expect((await store.listEvents({ text: 'breach', limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a1']);
        expect((await store.listEvents({ to: '2026-10-05', limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a1']);
        expect((await store.listEvents({ from: '2026-10-12', limit: 10, offset: 0 })).total).toBe(2);
        expect((await store.listEvents({ minOutlets: 2, limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a1']);
        expect((await store.listEvents({ sort: 'mentions', limit: 10, offset: 0 })).events[0]!.id).toBe('ev_a1');
      });

      it('treats search wildcards and quotes in the words as plain characters', async () => {
        expect((await store.listEvents({ text: '50%', limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a2']);
        expect((await store.listEvents({ text: '%', limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a2']);
        expect((await store.listEvents({ text: "_' OR 1=1 --", limit: 10, offset: 0 })).total).toBe(0);
      });

      it('lists outlets with their article counts', async () => {
        expect(await store.listOutlets()).toEqual([
          { outlet: 'EBS News', articles: 1 },
          { outlet: 'Northwire', articles: 1 },
          { outlet: 'The Vellmouth Courier', articles: 1 },
        ]);
      });
    });

    it('keeps what the linker needs to resume, document frequencies summed', async () => {
      const a1 = article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x');
      const a2 = article('a2', 'O', '2026-10-06T10:00:00.000Z', 'y');
      const { commit, event } = commitFor(a1, 'The levee failed.', null);
      await store.commitArticle(commit);
      await store.commitArticle(commitFor(a2, 'A bridge fell.', null).commit);
      const snap = await store.loadLinkerState();
      expect(snap.idf.docs).toBe(4);
      expect(new Map(snap.idf.df)).toEqual(
        new Map([
          [7, 2],
          [9, 4],
        ]),
      );
      expect(snap.events.map((b) => deserialiseEvent(b).id).sort()).toEqual([event.id, 'ev_a2'].sort());
      // Everything but the label, which the store keeps with the event record only.
      expect(snap.events.map(deserialiseEvent).find((e) => e.id === event.id)).toEqual({ ...event, label: '' });
    });

    describe('stories', () => {
      const levee = () =>
        openStory({
          id: 'a1',
          title: 'Levee fails at Dunvessel',
          outlet: '',
          published: '2026-10-05T10:00:00.000Z',
          vector: embedder.vector([]),
          names: [],
          isCopy: false,
        });
      const bridge = () =>
        openStory({
          id: 'a2',
          title: 'Orlin Bridge span falls',
          outlet: '',
          published: '2026-10-12T10:00:00.000Z',
          vector: embedder.vector([]),
          names: [],
          isCopy: false,
        });
      let s1: StoryState;
      let s2: StoryState;
      let e1: EventState;
      beforeEach(async () => {
        s1 = levee();
        s2 = bridge();
        const first = commitFor(
          article('a1', 'The Vellmouth Courier', '2026-10-05T10:00:00.000Z', 'x'),
          'The levee at Dunvessel failed overnight.',
          null,
          { story: s1 },
        );
        e1 = first.event;
        await store.commitArticle(first.commit);
        await store.commitArticle(
          commitFor(article('a2', 'EBS News', '2026-10-12T10:00:00.000Z', 'y'), 'A span of the Orlin Bridge fell into the river.', null, {
            story: s2,
            participants: ['Orlin Bridge Trust'],
            places: ['Veshel'],
          }).commit,
        );
        const third = commitFor(
          article('a3', 'Northwire', '2026-10-13T12:00:00.000Z', 'z'),
          'Crews began repairing the Dunvessel levee.',
          null,
          { story: s1 },
        );
        await store.commitArticle(third.commit);
        // A later article of the first event, in its story (the event's story stays the one that opened it).
        await store.commitArticle(
          commitFor(
            article('a4', 'EBS News', '2026-10-14T09:00:00.000Z', 'w'),
            'The levee breach flooded Dunvessel.',
            deserialiseEvent(serialiseEvent(e1)),
            { story: s1 },
          ).commit,
        );
      });

      it('files each article and the events it opened under its story, and counts the stories', async () => {
        expect((await store.counts()).stories).toBe(2);
        expect((await store.getArticle('a3'))!.article.story).toBe(s1.id);
        expect((await store.getEvent('ev_a1'))!.event.story).toBe(s1.id);
        expect((await store.listEvents({ story: s1.id, limit: 10, offset: 0 })).events.map((e) => e.id).sort()).toEqual(['ev_a1', 'ev_a3']);
        expect((await store.listEvents({ story: s2.id, limit: 10, offset: 0 })).events.map((e) => e.id)).toEqual(['ev_a2']);
      });

      it('lists stories, most recently active first, with filters and paging', async () => {
        const page = await store.listStories({ limit: 1, offset: 0 });
        expect(page.total).toBe(2);
        expect(page.stories[0]).toMatchObject({
          id: s1.id,
          label: 'Levee fails at Dunvessel',
          articleCount: 3,
          eventCount: 2,
          outlets: ['EBS News', 'Northwire', 'The Vellmouth Courier'],
          independentOutlets: 3,
        });
        expect((await store.listStories({ limit: 1, offset: 1 })).stories.map((x) => x.id)).toEqual([s2.id]);
        expect((await store.listStories({ outlet: 'Northwire', limit: 10, offset: 0 })).stories.map((x) => x.id)).toEqual([s1.id]);
        expect((await store.listStories({ text: 'orlin', limit: 10, offset: 0 })).stories.map((x) => x.id)).toEqual([s2.id]);
        expect((await store.listStories({ text: "%' OR 1=1 --", limit: 10, offset: 0 })).total).toBe(0);
        expect((await store.listStories({ minOutlets: 2, limit: 10, offset: 0 })).stories.map((x) => x.id)).toEqual([s1.id]);
        expect((await store.listStories({ to: '2026-10-05', limit: 10, offset: 0 })).stories.map((x) => x.id)).toEqual([s1.id]);
        expect((await store.listStories({ from: '2026-10-13', limit: 10, offset: 0 })).stories.map((x) => x.id)).toEqual([s1.id]);
        expect((await store.listStories({ sort: 'articles', limit: 10, offset: 0 })).stories[0]!.id).toBe(s1.id);
      });

      it('keeps the stories and events whose participants or places hold the words, in any case', async () => {
        const stories = (q: Partial<StoryQuery>) =>
          store.listStories({ limit: 10, offset: 0, ...q }).then((p) => p.stories.map((x) => x.id));
        const events = (q: Partial<EventQuery>) =>
          store.listEvents({ limit: 10, offset: 0, ...q }).then((p) => p.events.map((x) => x.id).sort());
        expect(await stories({ participant: 'bridge trust' })).toEqual([s2.id]);
        expect(await stories({ place: 'KORRIN' })).toEqual([s1.id]);
        expect(await stories({ participant: 'Port Authority', place: 'Veshel' })).toEqual([]);
        expect(await events({ place: 'veshel' })).toEqual(['ev_a2']);
        expect(await events({ participant: 'port authority' })).toEqual(['ev_a1', 'ev_a3']);
        // Words are matched as written: no wildcard or quote reaches the query.
        expect(await events({ participant: '%' })).toEqual([]);
        expect(await stories({ place: "_' OR 1=1 --" })).toEqual([]);
      });

      it('gives a story with its events and its articles, earliest first', async () => {
        const d = (await store.getStory(s1.id))!;
        expect(d.story.id).toBe(s1.id);
        expect(d.events.map((e) => e.id)).toEqual(['ev_a1', 'ev_a3']);
        expect(d.articles.map((a) => [a.id, a.outlet, a.published])).toEqual([
          ['a1', 'The Vellmouth Courier', '2026-10-05T10:00:00.000Z'],
          ['a3', 'Northwire', '2026-10-13T12:00:00.000Z'],
          ['a4', 'EBS News', '2026-10-14T09:00:00.000Z'],
        ]);
        expect(d.merges).toEqual([]);
        expect(await store.getStory('st_unknown')).toBeNull();
      });

      it('names the stories of the latest articles, most recent first', async () => {
        expect(await store.recentStoryIds(1)).toEqual([s1.id]);
        expect(await store.recentStoryIds(3)).toEqual([s1.id, s2.id]);
      });

      it('merges one story into another: articles and events move, the absorbed story leaves, the merge is recorded', async () => {
        const merged = mergeStories(s1, s2, 300);
        await store.commitStoryMerge({
          into: { record: storyRecord(merged), state: serialiseStory(merged) },
          from: s2.id,
          score: 0.55,
          at: '2026-10-15T00:00:00.000Z',
          messages: [],
        });
        expect(await store.getStory(s2.id)).toBeNull();
        expect(await store.storyMergedInto(s2.id)).toBe(s1.id);
        expect(await store.storyMergedInto(s1.id)).toBeNull();
        const d = (await store.getStory(s1.id))!;
        expect(d.articles.map((a) => a.id)).toEqual(['a1', 'a2', 'a3', 'a4']);
        expect(d.events.map((e) => e.id)).toEqual(['ev_a1', 'ev_a2', 'ev_a3']);
        expect(d.merges).toEqual([{ from: s2.id, into: s1.id, score: 0.55, at: '2026-10-15T00:00:00.000Z' }]);
        expect((await store.counts()).stories).toBe(1);
        expect((await store.getArticle('a2'))!.article.story).toBe(s1.id);
        expect(await store.recentStoryIds(5)).toEqual([s1.id]);
        // A writer that had not heard of the merge still files its article under the survivor.
        await store.commitArticle(
          commitFor(article('a5', 'Northwire', '2026-10-16T09:00:00.000Z', 'v'), 'The bridge reopened.', null, { story: s2 }).commit,
        );
        expect((await store.getArticle('a5'))!.article.story).toBe(s1.id);
        expect((await store.getEvent('ev_a5'))!.event.story).toBe(s1.id);
        expect(await store.getStory(s2.id)).toBeNull();
        const snap = await store.loadLinkerState();
        expect(snap.storyMerges).toEqual([[s2.id, s1.id]]);
      });

      it('reads a story back article by article, oldest first, with the vector and names each joined it with', async () => {
        const members = await store.storyMembers(s1.id);
        expect(members.map((m) => [m.articleId, m.outlet, m.published, m.isCopy])).toEqual([
          ['a1', 'The Vellmouth Courier', '2026-10-05T10:00:00.000Z', false],
          ['a3', 'Northwire', '2026-10-13T12:00:00.000Z', false],
          ['a4', 'EBS News', '2026-10-14T09:00:00.000Z', false],
        ]);
        expect(members[0]!.names).toEqual(['Vellmouth Port Authority', 'Korrin Bay']);
        expect(members[0]!.vector).toEqual(
          mention(article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x'), 0, 'The levee at Dunvessel failed overnight.').vector,
        );
        // The vector is a bag of the article's words: it goes with the text.
        await store.eraseArticleText('a3');
        expect((await store.storyMembers(s1.id)).map((m) => m.vector === null)).toEqual([false, true, false]);
      });

      it('splits a story: the moved articles and the events first reported in them go to the new story, the split is recorded', async () => {
        const kept = levee();
        const split = {
          ...openStory({
            id: 'a3',
            title: 'Repairs',
            outlet: '',
            published: '2026-10-13T12:00:00.000Z',
            vector: embedder.vector([]),
            names: [],
            isCopy: false,
          }),
          id: 'st_split',
        };
        kept.articleCount = 2;
        split.articleCount = 1;
        const e3 = deserialiseEvent((await store.loadLinkerState()).events.find((b) => deserialiseEvent(b).id === 'ev_a3')!);
        e3.story = split.id;
        await store.commitStorySplit({
          from: { record: storyRecord(kept), state: serialiseStory(kept) },
          into: { record: storyRecord(split), state: serialiseStory(split) },
          moved: ['a3'],
          events: [update(e3)],
          score: 0.05,
          at: '2026-10-15T00:00:00.000Z',
          messages: [],
        });
        expect((await store.counts()).stories).toBe(3);
        expect((await store.getStory(s1.id))!.articles.map((a) => a.id)).toEqual(['a1', 'a4']);
        expect((await store.getStory(s1.id))!.events.map((e) => e.id)).toEqual(['ev_a1']);
        const d = (await store.getStory(split.id))!;
        expect(d.articles.map((a) => a.id)).toEqual(['a3']);
        expect(d.events.map((e) => e.id)).toEqual(['ev_a3']);
        const record = { from: s1.id, into: split.id, articles: 1, score: 0.05, at: '2026-10-15T00:00:00.000Z' };
        expect(d.splits).toEqual([record]);
        expect((await store.getStory(s1.id))!.splits).toEqual([record]);
        expect((await store.getArticle('a3'))!.article.story).toBe(split.id);
        expect((await store.getEvent('ev_a3'))!.event.story).toBe(split.id);
        expect((await store.storyMembers(split.id)).map((m) => m.articleId)).toEqual(['a3']);
        // Examination marks on a story left whole are kept the same way as events'.
        const marked = { ...s2, examined: 1 };
        await store.putStoryStates([
          { id: s2.id, state: serialiseStory(marked) },
          { id: 'st_gone', state: serialiseStory(marked) },
        ]);
        const { deserialiseStory } = await import('../../src/link/story-state.js');
        expect((await store.loadLinkerState()).stories.map(deserialiseStory).find((x) => x.id === s2.id)!.examined).toBe(1);
      });

      it('keeps the stories for the linker to resume', async () => {
        const snap = await store.loadLinkerState();
        const { deserialiseStory } = await import('../../src/link/story-state.js');
        const states = snap.stories.map(deserialiseStory);
        expect(states.map((x) => x.id).sort()).toEqual([s1.id, s2.id].sort());
        expect(states.find((x) => x.id === s1.id)).toEqual(s1);
        expect(snap.storyMerges).toEqual([]);
      });
    });

    it('queues the deliveries fan-out hands to subscriptions and records attempts, down to the dead-letter list', async () => {
      const a = article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x');
      const messages = [
        {
          id: 'msg_1',
          type: 'event.opened',
          body: '{"type":"event.opened"}',
          created: '2026-10-05T10:00:00.000Z',
        },
      ];
      await store.commitArticle(commitFor(a, 'The levee failed.', null, { messages }).commit);
      expect(await store.dueDeliveries('2027-01-01T00:00:00.000Z', 10)).toEqual([]);
      await fanOutTo(store, 'one', ['msg_1'], '2026-10-05T10:00:00.000Z');
      await fanOutTo(store, 'two', ['msg_1'], '2026-10-05T10:00:00.000Z');
      expect(await store.dueDeliveries('2026-10-05T09:00:00.000Z', 10)).toEqual([]);
      const due = await store.dueDeliveries('2026-10-05T10:00:00.000Z', 10);
      expect(due.map((d) => [d.messageId, d.subscriber, d.status, d.attempts, d.body]).sort()).toEqual([
        ['msg_1', 'one', 'pending', 0, '{"type":"event.opened"}'],
        ['msg_1', 'two', 'pending', 0, '{"type":"event.opened"}'],
      ]);
      expect(due.map((d) => [d.rule, d.latencyMs])).toEqual([
        ['everything', null],
        ['everything', null],
      ]);
      await store.recordAttempt('msg_1', 'one', {
        status: 'delivered',
        attempts: 1,
        nextAt: '2026-10-05T10:00:01.000Z',
        error: null,
        latencyMs: 42,
      });
      await store.recordAttempt('msg_1', 'two', {
        status: 'dead',
        attempts: 8,
        nextAt: '2026-10-05T16:00:00.000Z',
        error: 'HTTP 500',
        latencyMs: 9,
      });
      expect(await store.dueDeliveries('2027-01-01T00:00:00.000Z', 10)).toEqual([]);
      expect((await store.deadLetters(10)).map((d) => [d.subscriber, d.attempts, d.lastError, d.rule, d.latencyMs])).toEqual([
        ['two', 8, 'HTTP 500', 'everything', 9],
      ]);
      expect((await store.subscriptionDeliveries('one', 10)).map((d) => [d.messageId, d.status, d.latencyMs])).toEqual([
        ['msg_1', 'delivered', 42],
      ]);
    });

    it('keeps subscriptions in the order made: a taken name is refused, a replaced one keeps its place in the log', async () => {
      expect(await store.listSubscriptions()).toEqual([]);
      expect(await store.addSubscription(subscription('desk', '2026-10-01T00:00:00.000Z'), 5)).toBe(true);
      expect(await store.addSubscription(subscription('alerts', '2026-10-02T00:00:00.000Z'), 7)).toBe(true);
      expect(await store.addSubscription({ ...subscription('desk'), url: 'https://other.example/' }, 0)).toBe(false);
      expect((await store.listSubscriptions()).map((x) => [x.name, x.cursor, x.url])).toEqual([
        ['desk', 5, 'https://desk.example/hook'],
        ['alerts', 7, 'https://alerts.example/hook'],
      ]);
      await store.putSubscription({ ...subscription('desk'), paused: true }, 0);
      const changed = await store.updateSubscription('alerts', (x) => ({
        ...x,
        previous: { secret: x.secret, until: '2026-10-03T00:00:00.000Z' },
      }));
      expect(changed?.previous?.until).toBe('2026-10-03T00:00:00.000Z');
      expect(await store.updateSubscription('missing', (x) => x)).toBeNull();
      expect((await store.listSubscriptions()).map((x) => [x.name, x.cursor, x.paused, x.previous?.until ?? null])).toEqual([
        ['desk', 5, true, null],
        ['alerts', 7, false, '2026-10-03T00:00:00.000Z'],
      ]);
      expect(await store.deleteSubscription('desk')).toBe(true);
      expect(await store.deleteSubscription('desk')).toBe(false);
      expect((await store.listSubscriptions()).map((x) => x.name)).toEqual(['alerts']);
    });

    it('fans notifications out once: only from the place read, each delivery queued once, with its rule', async () => {
      const messages = [1, 2, 3].map((n) => ({
        id: `msg_${n}`,
        type: 'event.opened',
        body: `{"type":"event.opened","data":{"n":${n}}}`,
        created: '2026-10-05T10:00:00.000Z',
      }));
      await store.commitArticle(commitFor(article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x'), 'x', null, { messages }).commit);
      await store.addSubscription(subscription('desk'), 0);
      const now = '2026-10-05T10:00:05.000Z';
      expect(await store.fanOut('desk', 0, 2, [{ messageId: 'msg_2', rule: 'strikes' }], now)).toBe(true);
      // A second pass that read the old place changes nothing.
      expect(await store.fanOut('desk', 0, 3, [{ messageId: 'msg_1', rule: 'strikes' }], now)).toBe(false);
      expect(
        await store.fanOut(
          'desk',
          2,
          3,
          [
            { messageId: 'msg_3', rule: 'floods' },
            { messageId: 'msg_2', rule: 'again' },
          ],
          now,
        ),
      ).toBe(true);
      expect(await store.fanOut('gone', 0, 3, [{ messageId: 'msg_1', rule: 'x' }], now)).toBe(false);
      expect((await store.listSubscriptions())[0]!.cursor).toBe(3);
      const due = await store.dueDeliveries(now, 10);
      expect(due.map((d) => [d.messageId, d.rule, d.nextAt]).sort()).toEqual([
        ['msg_2', 'strikes', now],
        ['msg_3', 'floods', now],
      ]);
      // The delivery log lists the newest notification first, filtered by status on request.
      await store.recordAttempt('msg_3', 'desk', { status: 'dead', attempts: 8, nextAt: now, error: 'HTTP 410', latencyMs: 12 });
      expect((await store.subscriptionDeliveries('desk', 10)).map((d) => [d.messageId, d.status])).toEqual([
        ['msg_3', 'dead'],
        ['msg_2', 'pending'],
      ]);
      expect((await store.subscriptionDeliveries('desk', 10, 'dead')).map((d) => d.messageId)).toEqual(['msg_3']);
      expect(await store.subscriptionDeliveries('desk', 10, 'delivered')).toEqual([]);
      expect(await store.subscriptionDeliveries('nobody', 10)).toEqual([]);
    });

    it("replays a subscription's dead letters with the same id, attempts counted afresh", async () => {
      const messages = [{ id: 'msg_1', type: 'event.opened', body: '{"type":"event.opened"}', created: '2026-10-05T10:00:00.000Z' }];
      await store.commitArticle(commitFor(article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x'), 'x', null, { messages }).commit);
      await fanOutTo(store, 'desk', ['msg_1'], '2026-10-05T10:00:00.000Z');
      await fanOutTo(store, 'other', ['msg_1'], '2026-10-05T10:00:00.000Z');
      for (const sub of ['desk', 'other'])
        await store.recordAttempt('msg_1', sub, {
          status: 'dead',
          attempts: 8,
          nextAt: '2026-10-05T16:00:00.000Z',
          error: 'HTTP 500',
          latencyMs: 3,
        });
      expect(await store.replayDeadLetters('desk', '2026-10-06T00:00:00.000Z')).toBe(1);
      expect(await store.replayDeadLetters('desk', '2026-10-06T00:00:00.000Z')).toBe(0);
      const due = await store.dueDeliveries('2026-10-06T00:00:00.000Z', 10);
      expect(due.map((d) => [d.messageId, d.subscriber, d.attempts, d.status, d.lastError, d.rule])).toEqual([
        ['msg_1', 'desk', 0, 'pending', null, 'everything'],
      ]);
      expect((await store.deadLetters(10)).map((d) => d.subscriber)).toEqual(['other']);
    });

    it('keeps API keys as their hashes, in the order made, until revoked', async () => {
      expect(await store.listApiKeys()).toEqual([]);
      const key = (id: string, created: string) => ({ id, name: `desk ${id}`, scopes: ['read' as const], hash: 'ab'.repeat(32), created });
      await store.addApiKey(key('key_000000000002', '2026-10-02T00:00:00.000Z'));
      await store.addApiKey({ ...key('key_000000000001', '2026-10-03T00:00:00.000Z'), scopes: ['push', 'manage'] });
      expect((await store.listApiKeys()).map((k) => [k.id, k.scopes])).toEqual([
        ['key_000000000002', ['read']],
        ['key_000000000001', ['push', 'manage']],
      ]);
      expect(await store.deleteApiKey('key_000000000002')).toBe(true);
      expect(await store.deleteApiKey('key_000000000002')).toBe(false);
      expect((await store.listApiKeys()).map((k) => k.id)).toEqual(['key_000000000001']);
    });

    it('keeps review rounds, newest first, and each reviewer’s latest answer per item', async () => {
      expect(await store.listReviewRounds()).toEqual([]);
      const item = (i: number): ReviewRound['items'][number] => ({
        item: i,
        stratum: 'near-bar',
        articleId: `https://x.example/${i}?a={b}`,
        sentenceIndex: i,
        eventId: `ev_${String(i).padStart(16, '0')}`,
        linked: true,
        score: 0.3,
        bar: 0.25,
        crossStory: false,
        outlet: 'Northwire',
        published: '2026-10-05T10:00:00.000Z',
      });
      const round = (id: string, created: string): ReviewRound => ({
        id,
        created,
        by: 'local',
        margin: 0.1,
        seed: 1,
        reviewersPerItem: 3,
        design: [{ stratum: 'near-bar', population: 40, sampled: 2 }],
        items: [item(0), item(1)],
      });
      await store.addReviewRound(round('rv_000000000001', '2026-10-05T00:00:00.000Z'));
      await store.addReviewRound(round('rv_000000000002', '2026-10-06T00:00:00.000Z'));
      expect((await store.listReviewRounds()).map((r) => [r.id, 'items' in r])).toEqual([
        ['rv_000000000002', false],
        ['rv_000000000001', false],
      ]);
      expect(await store.getReviewRound('rv_000000000001')).toEqual(round('rv_000000000001', '2026-10-05T00:00:00.000Z'));
      expect(await store.getReviewRound('rv_000000000404')).toBeNull();
      const answer = (i: number, reviewer: string, verdict: 'same' | 'different' | 'unsure', at: string) => ({
        round: 'rv_000000000001',
        item: i,
        reviewer,
        verdict,
        at,
      });
      await store.putReviewAnswer(answer(1, 'ana', 'same', '2026-10-05T01:00:00.000Z'));
      await store.putReviewAnswer(answer(0, 'ben', 'unsure', '2026-10-05T01:00:00.000Z'));
      await store.putReviewAnswer(answer(0, 'ana', 'different', '2026-10-05T02:00:00.000Z'));
      // A reviewer who changes their mind replaces their answer.
      await store.putReviewAnswer(answer(0, 'ben', 'same', '2026-10-05T03:00:00.000Z'));
      expect(await store.reviewAnswers('rv_000000000001')).toEqual([
        answer(0, 'ana', 'different', '2026-10-05T02:00:00.000Z'),
        answer(0, 'ben', 'same', '2026-10-05T03:00:00.000Z'),
        answer(1, 'ana', 'same', '2026-10-05T01:00:00.000Z'),
      ]);
      expect(await store.reviewAnswers('rv_000000000002')).toEqual([]);
    });

    it('replaces the linker state of a stored event, and skips one no longer stored', async () => {
      const { commit, event } = commitFor(article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x'), 'The levee failed.', null);
      await store.commitArticle(commit);
      const marked = { ...deserialiseEvent(serialiseEvent(event)), splitCheckedAt: 7, touched: 41 };
      await store.putEventStates([
        { id: event.id, state: serialiseEvent(marked) },
        { id: 'ev_gone', state: serialiseEvent({ ...marked, id: 'ev_gone' }) },
      ]);
      const states = (await store.loadLinkerState()).events.map(deserialiseEvent);
      expect(states.map((e) => [e.id, e.splitCheckedAt, e.touched])).toEqual([[event.id, 7, 41]]);
      expect((await store.getEvent(event.id))!.event.mentionCount).toBe(1);
    });

    it('lists due deliveries past the subscribers a dispatcher is busy with, however long their backlog', async () => {
      const a = article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x');
      // The slow receiver's 700 deliveries are older than the healthy one's single delivery.
      const messages = Array.from({ length: 700 }, (_, i) => ({
        id: `msg_${i}`,
        type: 'event.opened',
        body: `{"n":${i}}`,
        created: new Date(Date.parse('2026-10-05T09:00:00.000Z') + i).toISOString(),
      }));
      messages.push({ id: 'msg_new', type: 'event.opened', body: '{"n":"new"}', created: '2026-10-05T10:00:00.000Z' });
      await store.commitArticle(commitFor(a, 'The levee failed.', null, { messages }).commit);
      await fanOutTo(
        store,
        'slow',
        messages.slice(0, 700).map((m) => m.id),
        '2026-10-05T09:00:00.000Z',
      );
      await fanOutTo(store, 'healthy', ['msg_new'], '2026-10-05T10:00:00.000Z');
      expect((await store.dueDeliveries('2026-10-05T10:00:00.000Z', 5)).map((d) => d.subscriber)).toEqual([
        'slow',
        'slow',
        'slow',
        'slow',
        'slow',
      ]);
      expect((await store.dueDeliveries('2026-10-05T10:00:00.000Z', 5, ['slow'])).map((d) => [d.messageId, d.subscriber])).toEqual([
        ['msg_new', 'healthy'],
      ]);
    });

    it('records the vector space of its vectors once, and answers the first one recorded', async () => {
      expect(await store.claimVectorSpace('tfidf: 2^18')).toBe('tfidf: 2^18');
      expect(await store.claimVectorSpace('transformer: model sha256 0123')).toBe('tfidf: 2^18');
    });

    it('logs every notification in the order written, subscribers or not, numbers never reused after pruning', async () => {
      const message = (n: number, created: string) => ({
        id: `msg_${n}`,
        type: n % 2 ? 'event.opened' : 'story.opened',
        body: `{"type":"event.opened","data":{"n":${n}}}`,
        created,
      });
      expect(await store.notificationsAfter(0, 10)).toEqual({ items: [], first: null, last: 0 });
      const a1 = article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x');
      const a2 = article('a2', 'O', '2026-10-06T10:00:00.000Z', 'y');
      await store.commitArticle(
        commitFor(a1, 'The levee failed.', null, {
          messages: [message(1, '2026-10-05T10:00:00.000Z'), message(2, '2026-10-05T10:00:00.000Z')],
        }).commit,
      );
      await fanOutTo(store, 'one', ['msg_2'], '2026-10-05T10:00:00.000Z');
      await store.commitArticle(commitFor(a2, 'A bridge fell.', null, { messages: [message(3, '2026-10-06T10:00:00.000Z')] }).commit);
      const log = await store.notificationsAfter(0, 10);
      expect(log.items.map((i) => [i.seq, i.id, i.type, i.created])).toEqual([
        [1, 'msg_1', 'event.opened', '2026-10-05T10:00:00.000Z'],
        [2, 'msg_2', 'story.opened', '2026-10-05T10:00:00.000Z'],
        [3, 'msg_3', 'event.opened', '2026-10-06T10:00:00.000Z'],
      ]);
      expect(log.items[0]!.body).toBe(message(1, '').body);
      expect([log.first, log.last]).toEqual([1, 3]);
      expect((await store.notificationsAfter(1, 1)).items.map((i) => i.seq)).toEqual([2]);
      // The same message queued again keeps its number.
      await store.commitArticle(
        commitFor(article('a3', 'O', '2026-10-07T10:00:00.000Z', 'z'), 'x', null, {
          messages: [message(3, '2026-10-06T10:00:00.000Z')],
        }).commit,
      );
      expect((await store.notificationsAfter(0, 10)).last).toBe(3);
      // A notification nobody subscribed to goes by age; one with a pending delivery stays.
      expect(await store.pruneNotifications('2026-11-01T00:00:00.000Z')).toBe(2);
      expect(await store.notificationsAfter(0, 10)).toMatchObject({ items: [{ seq: 2 }], first: 2, last: 3 });
      await store.recordAttempt('msg_2', 'one', {
        status: 'delivered',
        attempts: 1,
        nextAt: '2026-10-05T10:00:01.000Z',
        error: null,
        latencyMs: 1,
      });
      expect(await store.pruneNotifications('2026-11-01T00:00:00.000Z')).toBe(1);
      await store.commitArticle(
        commitFor(article('a4', 'O', '2026-10-08T10:00:00.000Z', 'w'), 'y', null, {
          messages: [message(4, '2026-10-08T10:00:00.000Z')],
        }).commit,
      );
      expect(await store.notificationsAfter(0, 10)).toMatchObject({ items: [{ seq: 4, id: 'msg_4' }], first: 4, last: 4 });
    });

    it('prunes notifications once every delivery settled before the cut-off, never a pending one', async () => {
      const a = article('a1', 'O', '2026-10-05T10:00:00.000Z', 'x');
      const body = (n: number) => `{"type":"event.opened","data":{"event":{"id":"ev_${n}"},"mention":{"article":"a1","sentence":0}}}`;
      const messages = [1, 2, 3].map((n) => ({
        id: `msg_${n}`,
        type: 'event.opened',
        body: body(n),
        created: '2026-10-05T10:00:00.000Z',
      }));
      await store.commitArticle(commitFor(a, 'The levee failed.', null, { messages }).commit);
      for (const sub of ['one', 'two']) await fanOutTo(store, sub, ['msg_1', 'msg_2', 'msg_3'], '2026-10-05T10:00:00.000Z');
      const settle = (id: string, sub: string, status: 'delivered' | 'dead', at: string) =>
        store.recordAttempt(id, sub, { status, attempts: 1, nextAt: at, error: status === 'dead' ? 'HTTP 500' : null, latencyMs: 5 });
      await settle('msg_1', 'one', 'delivered', '2026-10-05T10:00:01.000Z');
      await settle('msg_1', 'two', 'dead', '2026-10-05T16:00:00.000Z');
      await settle('msg_2', 'one', 'delivered', '2026-10-05T10:00:01.000Z'); // 'two' still pending
      await settle('msg_3', 'one', 'delivered', '2026-10-05T10:00:01.000Z');
      await settle('msg_3', 'two', 'delivered', '2026-11-20T00:00:00.000Z'); // settled after the cut-off

      expect(await store.pruneNotifications('2026-11-01T00:00:00.000Z')).toBe(1);
      expect(await store.deadLetters(10)).toEqual([]);
      const due = await store.dueDeliveries('2027-01-01T00:00:00.000Z', 10);
      expect(due.map((d) => [d.messageId, d.subscriber, d.body])).toEqual([['msg_2', 'two', body(2)]]);
      // Nothing left to prune until the rest settle; then all of it goes.
      expect(await store.pruneNotifications('2026-11-01T00:00:00.000Z')).toBe(0);
      await settle('msg_2', 'two', 'delivered', '2026-10-06T00:00:00.000Z');
      expect(await store.pruneNotifications('2026-12-01T00:00:00.000Z')).toBe(2);
      expect(await store.dueDeliveries('2027-01-01T00:00:00.000Z', 10)).toEqual([]);
      // Erasing the article afterwards finds no notification to rewrite and still works.
      expect(await store.eraseArticleText('a1')).toBe(true);
    });

    it('merges one event into another: links move, the absorbed event leaves, the merge is recorded', async () => {
      const a1 = article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'x');
      const a2 = article('a2', 'EBS News', '2026-10-08T08:00:00.000Z', 'y');
      const first = commitFor(a1, 'A fire destroyed a warehouse.', null);
      const second = commitFor(a2, 'The warehouse blaze burned for hours.', null);
      await store.commitArticle(first.commit);
      await store.commitArticle(second.commit);
      expect(await store.recentEventIds(1)).toEqual([second.event.id]);
      expect((await store.recentEventIds(5)).sort()).toEqual([first.event.id, second.event.id].sort());
      const merged = mergeStates(first.event, second.event, 300);
      await store.commitMerge({
        into: update(merged),
        from: second.event.id,
        score: 0.45,
        at: '2026-10-08T09:00:00.000Z',
        messages: [],
      });
      expect(await store.getEvent(second.event.id)).toBeNull();
      expect(await store.mergedInto(second.event.id)).toBe(first.event.id);
      expect(await store.mergedInto(first.event.id)).toBeNull();
      const d = await store.getEvent(first.event.id);
      expect(d!.mentions.map((m) => m.articleId)).toEqual(['a1', 'a2']);
      expect(d!.event.outlets).toEqual(['EBS News', 'The Vellmouth Courier']);
      expect(d!.merges).toEqual([{ from: second.event.id, into: first.event.id, score: 0.45, at: '2026-10-08T09:00:00.000Z' }]);
      expect((await store.counts()).events).toBe(1);
      expect((await store.getArticle('a2'))!.sentences[0]!.links.map((l) => l.eventId)).toEqual([first.event.id]);
    });

    it('gives an event its linked mentions with their vectors, oldest first, for consolidation', async () => {
      const a1 = article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'x');
      const a2 = article('a2', 'EBS News', '2026-10-08T08:00:00.000Z', 'y');
      const first = commitFor(a1, 'A fire destroyed a warehouse.', null);
      await store.commitArticle(first.commit);
      await store.commitArticle(
        commitFor(a2, 'The warehouse blaze burned for hours.', deserialiseEvent(serialiseEvent(first.event))).commit,
      );
      const linked = await store.linkedMentions(first.event.id);
      expect(linked.map((l) => [l.mention.articleId, l.mention.outlet, l.rank, l.score])).toEqual([
        ['a1', 'The Vellmouth Courier', 0, 0.8],
        ['a2', 'EBS News', 0, 0.42],
      ]);
      const sent = first.commit.mentions[0]!;
      expect(linked[0]!.mention).toMatchObject({
        text: sent.text,
        participants: sent.participants,
        places: sent.places,
        published: sent.published,
        isCopy: false,
      });
      // Bit for bit: a split rebuilds events from exactly the vectors they were linked with.
      expect(linked[0]!.mention.vector).toEqual(sent.vector);
      expect(await store.linkedMentions('ev_missing')).toEqual([]);
    });

    it('lists the mentions linked to both of two events, with each link', async () => {
      const a1 = article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'x');
      const a2 = article('a2', 'EBS News', '2026-10-08T08:00:00.000Z', 'y');
      const first = commitFor(a1, 'A fire destroyed a warehouse.', null);
      await store.commitArticle(first.commit);
      // a2's sentence opens its own event and also links (rank 1) to a1's.
      const second = commitFor(a2, 'The warehouse fire closed the pier.', null);
      const further = furtherLink('a2', first.event.id, 0.31);
      await store.commitArticle({ ...second.commit, links: [...second.commit.links, further] });
      const both = await store.linkedToBoth(second.event.id, first.event.id);
      expect(both.map((b) => [b.mention.articleId, b.mention.sentenceIndex, b.links])).toEqual([
        [
          'a2',
          0,
          [
            { rank: 0, score: 0.8 },
            { rank: 1, score: 0.31 },
          ],
        ],
      ]);
      expect(both[0]!.mention.vector).toEqual(second.commit.mentions[0]!.vector);
      expect(await store.linkedToBoth(first.event.id, 'ev_none')).toEqual([]);
    });

    it('says which links are back-references, so consolidation gives them no weight', async () => {
      const a1 = article('a1', 'The Vellmouth Courier', '2026-10-07T22:00:00.000Z', 'x');
      const first = commitFor(a1, 'A fire destroyed a warehouse.', null);
      await store.commitArticle(first.commit);
      const second = commitFor(article('a2', 'EBS News', '2026-10-08T08:00:00.000Z', 'y'), 'The blaze angered the guild.', null);
      const back = furtherLink('a2', first.event.id, 0.12, { refersBack: true });
      await store.commitArticle({ ...second.commit, links: [...second.commit.links, back] });
      const linked = await store.linkedMentions(first.event.id);
      expect(linked.map((l) => [l.mention.articleId, l.rank, l.refersBack === true])).toEqual([
        ['a1', 0, false],
        ['a2', 1, true],
      ]);
      const both = await store.linkedToBoth(second.event.id, first.event.id);
      expect(both.map((b) => b.links)).toEqual([
        [
          { rank: 0, score: 0.8 },
          { rank: 1, score: 0.12, refersBack: true },
        ],
      ]);
    });

    it('splits part of an event off into a new one: links move, both events are written, the split is recorded', async () => {
      const { first, second, third } = await fireThenStrike(store);
      const kept = openEvent(first.event.id, first.commit.mentions[0] as EmbeddedMention);
      addMention(kept, first.commit.mentions[0] as EmbeddedMention, 1, 300);
      const split = openEvent('ev_split', second.commit.mentions[0] as EmbeddedMention);
      for (const c of [second, third]) addMention(split, c.commit.mentions[0] as EmbeddedMention, 1, 300);
      await store.commitSplit({
        from: update(kept),
        into: update(split),
        moved: [
          { articleId: 'a2', sentenceIndex: 0 },
          { articleId: 'a3', sentenceIndex: 0 },
        ],
        score: 0.05,
        at: '2026-10-09T09:00:00.000Z',
        messages: [],
      });
      const record = { from: first.event.id, into: 'ev_split', mentions: 2, score: 0.05, at: '2026-10-09T09:00:00.000Z' };
      const d = await store.getEvent(first.event.id);
      expect(d!.mentions.map((m) => m.articleId)).toEqual(['a1']);
      expect(d!.event.mentionCount).toBe(1);
      expect(d!.event.outlets).toEqual(['The Vellmouth Courier']);
      expect(d!.splits).toEqual([record]);
      const s = await store.getEvent('ev_split');
      expect(s!.mentions.map((m) => [m.articleId, m.score])).toEqual([
        ['a2', 0.42],
        ['a3', 0.42],
      ]);
      expect(s!.splits).toEqual([record]);
      expect((await store.linkedMentions('ev_split')).map((l) => l.mention.articleId)).toEqual(['a2', 'a3']);
      expect((await store.getArticle('a3'))!.sentences[0]!.links.map((l) => l.eventId)).toEqual(['ev_split']);
      expect(await store.counts()).toMatchObject({ events: 2, links: 3, mentions: 3 });
      expect((await store.loadLinkerState()).events.map((b) => deserialiseEvent(b).id).sort()).toEqual([first.event.id, 'ev_split'].sort());
    });

    it('relabels an event whose label sentence moved away in a split with its earliest remaining sentence', async () => {
      const { first, second } = await fireThenStrike(store);
      expect((await store.getEvent(first.event.id))!.event.label).toBe('A fire destroyed a warehouse.');
      // The part with the labelling sentence goes (as when a split-off event, whose opener is not its id's, splits again).
      const kept = openEvent(first.event.id, second.commit.mentions[0] as EmbeddedMention);
      const split = openEvent('ev_split', first.commit.mentions[0] as EmbeddedMention);
      await store.commitSplit({
        from: update(kept),
        into: update(split),
        moved: [{ articleId: 'a1', sentenceIndex: 0 }],
        score: 0.05,
        at: '2026-10-09T09:00:00.000Z',
        messages: [],
      });
      expect((await store.getEvent(first.event.id))!.event.label).toBe('Dockworkers voted to strike.');
      expect((await store.getEvent('ev_split'))!.event.label).toBe('A fire destroyed a warehouse.');
      expect((await store.eventLabels([first.event.id, 'ev_split'])).get(first.event.id)).toBe('Dockworkers voted to strike.');
    });

    it('keeps each article’s copy sketch, lists the recent ones and erases them with the text', async () => {
      const sk = (seed: number) => Uint32Array.from({ length: 128 }, (_, i) => (seed * 7919 + i * 104_729) >>> 0);
      const old = commitFor(article('a0', 'O', '2026-09-01T10:00:00.000Z', 'x'), 'Long ago.', null).commit;
      const a1 = commitFor(article('a1', 'O', '2026-10-05T10:00:00.000Z', 'y'), 'The levee failed.', null).commit;
      const a2 = { ...commitFor(article('a2', 'P', '2026-10-06T10:00:00.000Z', 'z'), 'The levee failed, P reports.', null).commit };
      a2.article = { ...a2.article, duplicateOf: 'a1', copySimilarity: 0.8 };
      await store.commitArticles([
        { ...old, sketch: sk(0) },
        { ...a1, sketch: sk(1) },
        { ...a2, sketch: sk(2) },
      ]);
      const recent = await store.recentSketches(7);
      expect(recent.map((r) => [r.id, r.time])).toEqual([
        ['a1', Date.parse('2026-10-05T10:00:00.000Z')],
        ['a2', Date.parse('2026-10-06T10:00:00.000Z')],
      ]);
      expect(recent[1]!.sketch).toEqual(sk(2));
      expect((await store.getArticle('a2'))!.article).toMatchObject({ duplicateOf: 'a1', copySimilarity: 0.8 });
      await store.eraseArticleText('a2');
      expect((await store.recentSketches(7)).map((r) => r.id)).toEqual(['a1']);
    });

    it('finds a stored article by the canonical form of its URL', async () => {
      await store.commitArticle(commitFixture('a1'));
      expect(await store.findByUrl('https://thevellmouthcourier.example/a1')).toBe('a1');
      expect(await store.findByUrl('https://thevellmouthcourier.example/a2')).toBeNull();
    });

    it('keeps the polled feeds in the order added; writing one again keeps its place', async () => {
      const feed = (id: string, added: string) => ({
        id,
        url: `https://${id}.example/rss`,
        outlet: null,
        intervalSeconds: 600,
        paused: false,
        origin: 'api' as const,
        added,
        state: newFeedState(added),
      });
      expect(await store.listFeeds()).toEqual([]);
      await store.putFeed(feed('fd_a', '2026-10-01T08:00:00.000Z'));
      await store.putFeed(feed('fd_b', '2026-10-01T09:00:00.000Z'));
      const changed = {
        ...feed('fd_a', '2026-10-01T08:00:00.000Z'),
        paused: true,
        state: { ...feed('fd_a', '2026-10-01T08:00:00.000Z').state, etag: '"v2"', delaysMs: [1000, 2000] },
      };
      await store.putFeed(changed);
      expect(await store.listFeeds()).toEqual([changed, feed('fd_b', '2026-10-01T09:00:00.000Z')]);
      expect(await store.deleteFeed('fd_a')).toBe(true);
      expect(await store.deleteFeed('fd_a')).toBe(false);
      expect((await store.listFeeds()).map((f) => f.id)).toEqual(['fd_b']);
    });

    it('changes one stored feed through a function of the feed as stored; nothing for a feed not stored', async () => {
      const f = {
        id: 'fd_a',
        url: 'https://fd-a.example/rss',
        outlet: null,
        intervalSeconds: 600,
        paused: false,
        origin: 'api' as const,
        added: '2026-10-01T08:00:00.000Z',
        state: newFeedState('2026-10-01T08:00:00.000Z'),
      };
      await store.putFeed(f);
      const paused = await store.updateFeed('fd_a', (cur) => ({ ...cur, paused: true }));
      expect(paused).toEqual({ ...f, paused: true });
      // A poll's result written afterwards keeps the pause: it changes the state only.
      await store.updateFeed('fd_a', (cur) => ({ ...cur, state: { ...cur.state, requests: 1, etag: '"v1"', delaysMs: [5] } }));
      expect(await store.listFeeds()).toEqual([{ ...f, paused: true, state: { ...f.state, requests: 1, etag: '"v1"', delaysMs: [5] } }]);
      expect(await store.updateFeed('fd_missing', (cur) => cur)).toBeNull();
      expect((await store.listFeeds()).map((x) => x.id)).toEqual(['fd_a']);
    });

    it('erases stored text on demand and by age, keeping links and events', async () => {
      const a1 = article('a1', 'O', '2026-10-05T10:00:00.000Z', 'Old text.');
      const a2 = article('a2', 'O', '2026-10-20T10:00:00.000Z', 'New text.');
      const first = commitFor(a1, 'The levee failed.', null);
      await store.commitArticle(first.commit);
      await store.commitArticle(commitFor(a2, 'The levee was rebuilt.', deserialiseEvent(serialiseEvent(first.event))).commit);
      expect(await store.eraseTextBefore('2026-10-10')).toBe(1);
      const old = await store.getArticle('a1');
      expect(old!.article.text).toBeNull();
      expect(old!.sentences[0]!.text).toBe('');
      expect(old!.sentences[0]!.links).toHaveLength(1);
      const ev = await store.getEvent(first.event.id);
      expect(ev!.event.label).toBe('The levee was rebuilt.');
      expect(ev!.mentions.map((m) => m.text)).toEqual([null, 'The levee was rebuilt.']);
      // The vector is a bag of the sentence's hashed words: it is erased with the text.
      expect((await store.linkedMentions(first.event.id)).map((l) => l.mention.vector === null)).toEqual([true, false]);
      expect(await store.eraseArticleText('a2')).toBe(true);
      expect((await store.getEvent(first.event.id))!.event.label).toMatch(/erased/);
      expect(await store.eraseArticleText('missing')).toBe(false);
    });

    it('leaves no copy of erased text in notifications, linker states or later commits', async () => {
      // (States of earlier versions carried the label; each backend's migrations drop it.)
      const secret = 'The Dunvessel levee failed at night.';
      const a1 = article('a1', 'O', '2026-10-05T10:00:00.000Z', secret);
      const a2 = article('a2', 'P', '2026-10-20T10:00:00.000Z', 'The levee was rebuilt.');
      const message = (id: string, type: string, data: object): OutboxMessage => ({
        id,
        type,
        body: JSON.stringify({ type, timestamp: '2026-10-20T10:00:00.000Z', data }),
        created: '2026-10-20T10:00:00.000Z',
      });
      const first = commitFor(a1, secret, null);
      await store.commitArticle({
        ...first.commit,
        messages: [
          message('msg_opened', 'event.opened', {
            event: { id: first.event.id, label: secret },
            mention: { article: 'a1', sentence: 0, text: secret },
          }),
        ],
      });
      // The linker's memory still holds the first label when the second article joins.
      const joined = commitFor(a2, 'The levee was rebuilt.', deserialiseEvent(serialiseEvent(first.event)));
      joined.event.label = secret;
      await store.commitArticle({
        ...joined.commit,
        messages: [
          message('msg_outlet', 'event.outlet_added', {
            event: { id: first.event.id, label: secret },
            outlet: 'P',
            mention: { article: 'a2', sentence: 0, text: 'The levee was rebuilt.' },
          }),
        ],
      });
      await fanOutTo(store, 'desk', ['msg_opened', 'msg_outlet'], '2026-10-20T10:00:00.000Z');
      expect(await store.eraseTextBefore('2026-10-10')).toBe(1);

      const bodies = (await store.dueDeliveries('2027-01-01T00:00:00.000Z', 10)).map((d) => d.body);
      expect(bodies).toHaveLength(2);
      expect(bodies.filter((b) => b.includes('Dunvessel'))).toEqual([]);
      const opened = JSON.parse(bodies.find((b) => b.includes('event.opened'))!) as {
        data: { event: { label: string }; mention: { text: string | null } };
      };
      expect(opened.data.mention.text).toBeNull();
      expect(opened.data.event.label).toBe('The levee was rebuilt.');
      expect(bodies.find((b) => b.includes('event.outlet_added'))).toContain('"text":"The levee was rebuilt."');
      const states = (await store.loadLinkerState()).events;
      expect(states.filter((s) => Buffer.from(s).toString('utf8').includes('Dunvessel'))).toEqual([]);
      expect(states.map((s) => deserialiseEvent(s).label)).toEqual(['']);

      // A linker that still remembers the erased label cannot write it back.
      const later = commitFor(
        article('a3', 'Q', '2026-10-21T10:00:00.000Z', 'Repairs went on.'),
        'Repairs went on.',
        deserialiseEvent(serialiseEvent(joined.event)),
      );
      later.event.label = secret;
      await store.commitArticle({ ...later.commit, events: [{ ...later.commit.events[0]!, record: toRecord(later.event) }] });
      expect((await store.getEvent(first.event.id))!.event.label).toBe('The levee was rebuilt.');
      expect(await store.eventLabels([first.event.id, 'ev_missing'])).toEqual(new Map([[first.event.id, 'The levee was rebuilt.']]));
    });

    describe("analysts' corrections", () => {
      let demo: Article[];
      let rt: Runtime;
      beforeEach(async () => {
        demo ??= (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles.slice(0, 40);
        rt = await createRuntime(testConfig({ link: { consolidateEvery: 0 } }), createLogger('silent'), store);
        await runArticles(rt, demo);
        await consolidate(rt, await store.recentEventIds(1e9), await store.recentStoryIds(1e9));
      });

      /** Everything a correction may touch, as the store holds it: events, their mentions and links, every article's links, the states of `ids`. */
      const dump = async (ids: readonly string[]) => ({
        events: (await store.listEvents({ limit: 1000, offset: 0 })).events,
        details: await Promise.all(ids.map((id) => store.getEvent(id))),
        links: await Promise.all(demo.map(async (a) => (await store.getArticle(a.id))?.sentences.map((x) => x.links))),
        states: (await store.loadLinkerState()).events
          .filter((b) => ids.includes(deserialiseEvent(b).id))
          .map((b) => Buffer.from(b).toString('base64')),
        counts: await store.counts(),
      });
      /** The biggest event, and another. */
      const pair = async () => {
        const [a, b] = (await store.listEvents({ limit: 2, offset: 0, sort: 'mentions' })).events;
        return [a!.id, b!.id] as const;
      };

      it('moves a sentence, keeps it there through consolidation and a restart, and its undo restores the exact prior state', async () => {
        const [a, b] = await pair();
        const moved = (await store.getEvent(a))!.mentions.at(-1)!;
        const sentence = { articleId: moved.articleId, sentenceIndex: moved.sentenceIndex };
        const before = await dump([a, b]);
        const c = await applyCorrection(
          rt,
          { kind: 'move', from: a, to: b, mentions: [sentence] },
          { by: 'key_000000000001', note: 'wrong event' },
        );
        const atB = (await store.getEvent(b))!.mentions.find(
          (m) => m.articleId === sentence.articleId && m.sentenceIndex === sentence.sentenceIndex,
        );
        expect(atB?.evidence.correctedBy).toBe(c.id);
        expect(
          (await store.getEvent(a))!.mentions.some((m) => m.articleId === sentence.articleId && m.sentenceIndex === sentence.sentenceIndex),
        ).toBe(false);

        // Consolidation, then a restart (a new linker reads the store), then consolidation again.
        const settle = async (r: Runtime) => consolidate(r, await store.recentEventIds(1e9), await store.recentStoryIds(1e9));
        await settle(rt);
        const restarted = await createRuntime(testConfig({ link: { consolidateEvery: 0 } }), createLogger('silent'), store);
        await settle(restarted);
        expect((await store.getEvent(b))!.mentions.some((m) => m.evidence.correctedBy === c.id)).toBe(true);
        expect(await store.mergedInto(a)).toBeNull();

        const undo = await applyCorrection(restarted, { kind: 'undo', correction: c.id }, { by: 'key_000000000001', note: null });
        expect(undo).toMatchObject({ kind: 'undo', undoes: c.id });
        expect(await dump([a, b])).toEqual(before);
        const log = await store.listCorrections(10, 0);
        expect(log.corrections.map((x) => [x.id, x.kind, x.undoneBy])).toEqual([
          [undo.id, 'undo', null],
          [c.id, 'move', undo.id],
        ]);
        expect(log.corrections[1]).toMatchObject({ by: 'key_000000000001', note: 'wrong event', events: [a, b], mentions: [sentence] });
      });

      it('merges two events and its undo restores both exactly; consolidation then keeps them apart', async () => {
        const [a, b] = await pair();
        const before = await dump([a, b]);
        const c = await applyCorrection(rt, { kind: 'merge', from: b, into: a }, { by: 'local', note: null });
        expect(await store.getEvent(b)).toBeNull();
        expect((await store.getEvent(a))!.event.mentionCount).toBe(
          before.details[0]!.event.mentionCount + before.details[1]!.event.mentionCount,
        );
        const restarted = await createRuntime(testConfig({ link: { consolidateEvery: 0 } }), createLogger('silent'), store);
        await applyCorrection(restarted, { kind: 'undo', correction: c.id }, { by: 'local', note: null });
        expect(await dump([a, b])).toEqual(before);
        expect((await activeBinds(store)).apart).toEqual([[b, a]]);
      });

      it('merges two stories and its undo restores both exactly, with their articles and events; consolidation then keeps them apart', async () => {
        const [x, y] = (await store.listStories({ limit: 2, offset: 0, sort: 'articles' })).stories.map((st) => st.id) as [string, string];
        const stories = async () => ({
          list: (await store.listStories({ limit: 1000, offset: 0 })).stories,
          details: [await store.getStory(x), await store.getStory(y)],
          articles: await Promise.all(demo.map(async (a) => (await store.getArticle(a.id))?.article.story)),
          events: (await store.listEvents({ limit: 1000, offset: 0 })).events.map((e) => [e.id, e.story]),
          states: (await store.loadLinkerState()).stories.map((b) => Buffer.from(b).toString('base64')).sort(),
          counts: await store.counts(),
        });
        const before = await stories();
        const c = await applyCorrection(rt, { kind: 'merge-stories', from: y, into: x }, { by: 'local', note: 'one thread' });
        expect(await store.storyMergedInto(y)).toBe(x);
        expect((await store.getStory(x))!.articles.length).toBe(before.details[0]!.articles.length + before.details[1]!.articles.length);
        const restarted = await createRuntime(testConfig({ link: { consolidateEvery: 0 } }), createLogger('silent'), store);
        await applyCorrection(restarted, { kind: 'undo', correction: c.id }, { by: 'local', note: null });
        expect(await stories()).toEqual(before);
        expect((await activeBinds(store)).apart).toEqual([[y, x]]);
        expect((await store.listCorrections(5, 0)).corrections.map((r) => [r.kind, r.undoneBy !== null])).toEqual([
          ['undo', false],
          ['merge-stories', true],
        ]);
      });

      it('keeps threshold adjustments in the corrections log: the newest standing one is in effect, after a restart too, and undoing it puts back the one before', async () => {
        const links = (await store.counts()).links;
        const a = await applyCorrection(
          rt,
          { kind: 'threshold', offset: -0.05, round: null, heldOutF1: null },
          { by: 'local', note: 'by hand' },
        );
        const b = await applyCorrection(
          rt,
          { kind: 'threshold', offset: 0.03, round: 'rv_000000000001', heldOutF1: { before: 0.6, after: 0.7 } },
          { by: 'key_000000000001', note: null },
        );
        expect(b.threshold).toEqual({ from: -0.05, to: 0.03, round: 'rv_000000000001', heldOutF1: { before: 0.6, after: 0.7 } });
        expect(rt.linker.thresholdAdjustment).toBe(0.03);
        // Nothing linked changes.
        expect((await store.counts()).links).toBe(links);
        const restarted = await createRuntime(testConfig({ link: { consolidateEvery: 0 } }), createLogger('silent'), store);
        expect(restarted.linker.thresholdAdjustment).toBe(0.03);
        const undo = await applyCorrection(restarted, { kind: 'undo', correction: b.id }, { by: 'local', note: null });
        expect(undo.threshold).toMatchObject({ from: 0.03, to: -0.05 });
        expect(restarted.linker.thresholdAdjustment).toBe(-0.05);
        expect((await activeBinds(store)).thresholdOffset).toBe(-0.05);
        await applyCorrection(restarted, { kind: 'undo', correction: a.id }, { by: 'local', note: null });
        expect((await activeBinds(store)).thresholdOffset).toBe(0);
        expect((await store.listCorrections(4, 0)).corrections.map((r) => [r.kind, r.undoneBy !== null])).toEqual([
          ['undo', false],
          ['undo', false],
          ['threshold', true],
          ['threshold', true],
        ]);
      });

      it('divides a story by hand and its undo restores it exactly, with its articles and events', async () => {
        const [x] = (await store.listStories({ limit: 1, offset: 0, sort: 'articles' })).stories.map((st) => st.id) as [string];
        const members = await store.storyMembers(x);
        const leaving = members.slice(-2).map((m) => m.articleId);
        const snapshot = async () => ({
          list: (await store.listStories({ limit: 1000, offset: 0 })).stories,
          story: await store.getStory(x),
          articles: await Promise.all(demo.map(async (a) => (await store.getArticle(a.id))?.article.story)),
          events: (await store.listEvents({ limit: 1000, offset: 0 })).events.map((e) => [e.id, e.story, e.version]),
          states: (await store.loadLinkerState()).stories.map((b) => Buffer.from(b).toString('base64')).sort(),
          eventStates: (await store.loadLinkerState()).events.map((b) => Buffer.from(b).toString('base64')).sort(),
          counts: await store.counts(),
        });
        const before = await snapshot();
        const c = await applyCorrection(rt, { kind: 'split-story', from: x, articles: leaving }, { by: 'local', note: null });
        const into = c.events[1]!;
        expect((await store.getStory(into))!.articles.map((a) => a.id).sort()).toEqual([...leaving].sort());
        expect((await store.getStory(x))!.articles).toHaveLength(members.length - 2);
        const restarted = await createRuntime(testConfig({ link: { consolidateEvery: 0 } }), createLogger('silent'), store);
        await applyCorrection(restarted, { kind: 'undo', correction: c.id }, { by: 'local', note: null });
        expect(await snapshot()).toEqual(before);
      });

      it('splits sentences off into a new event that consolidation never merges back, and refuses what it cannot do', async () => {
        const [a, b] = await pair();
        const mentions = (await store.getEvent(a))!.mentions
          .slice(-2)
          .map((m) => ({ articleId: m.articleId, sentenceIndex: m.sentenceIndex }));
        const c = await applyCorrection(rt, { kind: 'split', from: a, mentions }, { by: 'local', note: null });
        const into = c.events[1]!;
        expect((await store.getEvent(into))!.mentions.map((m) => m.articleId)).toEqual(mentions.map((m) => m.articleId));
        const refused = async (p: Promise<unknown>) =>
          (await p.then(
            () => null,
            (e: { code?: string }) => e.code,
          )) ?? 'accepted';
        expect(await refused(applyCorrection(rt, { kind: 'merge', from: a, into: a }, { by: 'local', note: null }))).toBe(
          'STRAND_REQUEST_INVALID',
        );
        expect(await refused(applyCorrection(rt, { kind: 'move', from: b, to: a, mentions }, { by: 'local', note: null }))).toBe(
          'STRAND_REQUEST_INVALID',
        );
        expect(
          await refused(applyCorrection(rt, { kind: 'merge', from: 'ev_0000000000000000', into: a }, { by: 'local', note: null })),
        ).toBe('STRAND_NOT_FOUND');
        expect(await refused(applyCorrection(rt, { kind: 'undo', correction: 'cr_000000000000' }, { by: 'local', note: null }))).toBe(
          'STRAND_NOT_FOUND',
        );
        // Once the new event changed, the split cannot be undone without losing that.
        const other = await applyCorrection(
          rt,
          {
            kind: 'move',
            from: b,
            to: into,
            mentions: [(await store.getEvent(b))!.mentions.map((m) => ({ articleId: m.articleId, sentenceIndex: m.sentenceIndex }))[0]!],
          },
          { by: 'local', note: null },
        );
        expect(await refused(applyCorrection(rt, { kind: 'undo', correction: c.id }, { by: 'local', note: null }))).toBe(
          'STRAND_CORRECTION_CONFLICT',
        );
        expect(other.kind).toBe('move');
        // A consolidation that merges whatever it finds alike, after a restart: the two stay apart.
        const eager = await createRuntime(
          testConfig({ link: { consolidateEvery: 0, mergeThreshold: 0, splitThreshold: 0 } }),
          createLogger('silent'),
          store,
        );
        const { merges } = await consolidate(eager, await store.recentEventIds(1e9), await store.recentStoryIds(1e9));
        expect(merges.length).toBeGreaterThan(0);
        const home = async (id: string) => (await store.mergedInto(id)) ?? id;
        expect(await home(into)).not.toBe(await home(a));
      });
    });
  });
}
