import type { FastifyInstance } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import type { Runtime } from '../../src/runtime.js';
import { linkingApp, runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

const OPERATOR = 'k7Qz2mVw9XcB4nRt8LpY3sHd6FgJ1aEu';

describe('corrections through the API', () => {
  let rt: Runtime;
  let app: FastifyInstance;
  let manage: Record<string, string>;
  let keyId: string;
  let articleIds: string[];

  beforeAll(async () => {
    rt = await testRuntime({ link: { consolidateEvery: 0 } });
    const articles = (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles.slice(0, 30);
    articleIds = articles.map((a) => a.id);
    await runArticles(rt, articles);
    app = await linkingApp(rt, { auth: { tokens: [OPERATOR], protect: 'changes' } });
    const made = await app.inject({
      method: 'POST',
      url: '/api/keys',
      headers: { authorization: `Bearer ${OPERATOR}` },
      payload: { name: 'desk editor', scopes: ['manage'] },
    });
    manage = { authorization: `Bearer ${made.json().key}` };
    keyId = made.json().id;
  });
  afterAll(async () => {
    await app.close();
    await rt.close();
  });

  const biggest = async () =>
    (await app.inject({ url: '/api/events?sort=mentions&limit=2' })).json().events.map((e: { id: string }) => e.id);
  const correct = (payload: object) => app.inject({ method: 'POST', url: '/api/corrections', headers: manage, payload });

  it('detaches a sentence, shows who did it in the log and on the link, notifies it, and undoes it', async () => {
    const [a] = await biggest();
    const event = (await app.inject({ url: `/api/events/${a}` })).json();
    const last = (await rt.store.getEvent(a))!.mentions.at(-1)!;
    const made = await correct({
      kind: 'detach',
      from: a,
      mentions: [{ article: last.articleId, sentence: last.sentenceIndex }],
      note: 'another fire',
    });
    expect(made.statusCode).toBe(200);
    const c = made.json();
    expect(c).toMatchObject({ kind: 'detach', by: keyId, note: 'another fire', undoes: null, undoneBy: null });
    const detached = (await app.inject({ url: `/api/events/${c.events[1]}` })).json();
    expect(detached.byOutlet.flatMap((o: { mentions: unknown[] }) => o.mentions)).toEqual([
      expect.objectContaining({ articleId: last.articleId, evidence: expect.objectContaining({ correctedBy: c.id }) }),
    ]);

    const log = (await app.inject({ url: '/api/corrections' })).json();
    expect(log.total).toBe(1);
    expect(log.corrections[0]).toMatchObject({ id: c.id, by: keyId, binds: { apart: [[a, c.events[1]]] } });
    const detail = (await app.inject({ url: `/api/corrections/${c.id}` })).json();
    expect(detail.before.events[a].record.mentionCount).toBe(event.event.mentionCount);
    expect(detail.before.events[c.events[1]]).toBeNull();
    expect(JSON.stringify(detail)).not.toContain('"state"');

    const notified = (await rt.store.notificationsAfter(0, 10_000)).items.filter((n) => n.type === 'event.corrected');
    expect(notified.map((n) => JSON.parse(n.body).data.correction)).toEqual([
      expect.objectContaining({ id: c.id, kind: 'detach', by: keyId }),
    ]);

    const undone = await app.inject({
      method: 'POST',
      url: `/api/corrections/${c.id}/undo`,
      headers: manage,
      payload: { note: 'it was the same fire' },
    });
    expect(undone.json()).toMatchObject({ kind: 'undo', undoes: c.id });
    expect((await app.inject({ url: `/api/events/${c.events[1]}` })).statusCode).toBe(404);
    expect((await app.inject({ url: `/api/events/${a}` })).json().event.mentionCount).toBe(event.event.mentionCount);
    const again = await app.inject({ method: 'POST', url: `/api/corrections/${c.id}/undo`, headers: manage });
    expect([again.statusCode, again.json().error.code]).toEqual([409, 'STRAND_CORRECTION_CONFLICT']);
  });

  it('makes a back-reference an analyst detaches an ordinary link of the event it makes, and undoes it', async () => {
    let back: { articleId: string; sentenceIndex: number; eventId: string } | undefined;
    for (const id of articleIds)
      for (const s of (await rt.store.getArticle(id))?.sentences ?? [])
        for (const l of s.links) if (l.evidence.refersBack && !back) back = { articleId: id, sentenceIndex: s.index, eventId: l.eventId };
    expect(back).toBeDefined();
    const before = (await app.inject({ url: `/api/events/${back!.eventId}` })).json().event.mentionCount;
    const made = await correct({
      kind: 'detach',
      from: back!.eventId,
      mentions: [{ article: back!.articleId, sentence: back!.sentenceIndex }],
    });
    expect(made.statusCode).toBe(200);
    const c = made.json();
    // It weighed nothing where it was, and counts as the one mention of the event it now makes.
    expect((await app.inject({ url: `/api/events/${back!.eventId}` })).json().event.mentionCount).toBe(before);
    const detached = (await app.inject({ url: `/api/events/${c.events[1]}` })).json();
    expect(detached.event.mentionCount).toBe(1);
    const [link] = detached.byOutlet.flatMap((o: { mentions: { evidence: object }[] }) => o.mentions);
    expect(link.evidence).toMatchObject({ correctedBy: c.id });
    expect(link.evidence).not.toHaveProperty('refersBack');
    await app.inject({ method: 'POST', url: `/api/corrections/${c.id}/undo`, headers: manage, payload: {} });
    const restored = (await rt.store.getArticle(back!.articleId))!.sentences.find((s) => s.index === back!.sentenceIndex)!.links;
    expect(restored.find((l) => l.eventId === back!.eventId)?.evidence.refersBack).toBe(true);
  });

  it('sends a client asking for an event an analyst merged away to the survivor, until the merge is undone', async () => {
    const [a, b] = await biggest();
    const made = (await correct({ kind: 'merge', from: b, into: a })).json();
    const r = await app.inject({ url: `/api/events/${b}` });
    expect([r.statusCode, r.headers.location, r.headers['cache-control']]).toEqual([308, `/api/events/${a}`, 'no-store']);
    await app.inject({ method: 'POST', url: `/api/corrections/${made.id}/undo`, headers: manage });
    expect((await app.inject({ url: `/api/events/${b}` })).statusCode).toBe(200);
  });

  it('merges two stories and undoes it, divides one, notifying story.corrected', async () => {
    const [x, y] = (await app.inject({ url: '/api/stories?sort=articles&limit=2' })).json().stories.map((st: { id: string }) => st.id);
    const made = await correct({ kind: 'merge-stories', from: y, into: x });
    expect(made.json()).toMatchObject({ kind: 'merge-stories', events: [y, x] });
    expect((await app.inject({ url: `/api/stories/${y}` })).statusCode).toBe(308);
    const wrongIds = await correct({ kind: 'merge-stories', from: 'ev_0000000000000000', into: x });
    expect([wrongIds.statusCode, wrongIds.json().error.message]).toEqual([400, expect.stringMatching(/takes story ids/)]);
    await app.inject({ method: 'POST', url: `/api/corrections/${made.json().id}/undo`, headers: manage });
    expect((await app.inject({ url: `/api/stories/${y}` })).statusCode).toBe(200);
    const last = (await rt.store.storyMembers(x)).at(-1)!.articleId;
    const divided = await correct({ kind: 'split-story', from: x, articles: [last] });
    expect(divided.json()).toMatchObject({ kind: 'split-story', events: [x, expect.stringMatching(/^st_/)] });
    expect((await rt.store.getStory(divided.json().events[1]))!.articles.map((a) => a.id)).toEqual([last]);
    const types = (await rt.store.notificationsAfter(0, 10_000)).items.filter((n) => n.type === 'story.corrected');
    expect(types.map((n) => JSON.parse(n.body).data.correction.kind)).toEqual(['merge-stories', 'undo', 'split-story']);
  });

  it('needs a key with the manage scope to correct, and none to read the log', async () => {
    const [a, b] = await biggest();
    expect((await app.inject({ method: 'POST', url: '/api/corrections', payload: { kind: 'merge', from: b, into: a } })).statusCode).toBe(
      401,
    );
    expect((await app.inject({ url: '/api/corrections' })).statusCode).toBe(200);
  });

  it('refuses malformed and hostile corrections with a clear error, changing nothing', async () => {
    const [a, b] = await biggest();
    const before = (await app.inject({ url: '/api/corrections' })).json().total;
    const cases: [object, number][] = [
      [{ kind: 'rename', from: a }, 400],
      [{ kind: 'merge', from: a }, 400],
      [{ kind: 'merge', from: 'ev_../../etc', into: a }, 400],
      [{ kind: 'move', from: a, mentions: [{ article: 'x', sentence: 0 }] }, 400],
      [{ kind: 'move', from: a, to: b, mentions: [{ article: 'x', sentence: -1 }] }, 400],
      [{ kind: 'move', from: a, to: b, mentions: [{ article: 'not-linked', sentence: 0 }] }, 400],
      [{ kind: 'split', from: a, mentions: Array.from({ length: 1001 }, (_, i) => ({ article: 'x', sentence: i })) }, 400],
      [{ kind: 'merge', from: a, into: b, note: 'x'.repeat(2001) }, 400],
      [{ kind: 'merge', from: a, into: b, admin: true }, 400],
      [{ kind: 'merge', from: 'ev_0000000000000000', into: b }, 404],
    ];
    for (const [payload, status] of cases) {
      const r = await correct(payload);
      expect(r.statusCode, JSON.stringify(payload).slice(0, 100)).toBe(status);
      expect(r.json().error.code).toMatch(/^STRAND_/);
    }
    expect((await app.inject({ url: '/api/corrections' })).json().total).toBe(before);
  });

  it('answers 503 where no linker runs (a Redis api process), saying where corrections go', async () => {
    const plain = await buildApp({
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'idle', processed: 0, total: 0, stored: 0, rejected: 0 }),
    });
    const [a, b] = await biggest();
    const r = await plain.inject({
      method: 'POST',
      url: '/api/corrections',
      headers: manage,
      payload: { kind: 'merge', from: b, into: a },
    });
    expect([r.statusCode, r.json().error.code]).toEqual([503, 'STRAND_STOPPED']);
    await plain.close();
  });
});
