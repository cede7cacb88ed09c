import type { FastifyInstance } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Runtime } from '../../src/runtime.js';
import { demoApi, linkingApp } from '../helpers/runtime.js';

// The demo exercises the mechanics; it says nothing about how well the linker does on real news.
describe('review rounds through the API', () => {
  let rt: Runtime;
  let app: FastifyInstance;
  beforeAll(async () => {
    ({ rt, app } = await demoApi());
  });
  afterAll(async () => {
    await app.close();
    await rt.close();
  });
  const post = (url: string, payload: object) => app.inject({ method: 'POST', url, payload });

  it('draws a round by strata, hands each reviewer the items still wanting answers, and reports what the answers say', async () => {
    const made = await post('/api/reviews', { size: 40, reviewersPerItem: 3, seed: 5 });
    expect(made.statusCode).toBe(201);
    const round = made.json();
    expect(made.headers.location).toBe(`/api/reviews/${round.id}`);
    expect(round.items).toBe(40);
    expect(round.design.reduce((s: number, d: { sampled: number }) => s + d.sampled, 0)).toBe(40);
    // Equal allocation: no stratum that has decisions is left out.
    for (const d of round.design) if (d.population > 0) expect(d.sampled).toBeGreaterThan(0);
    expect((await app.inject({ url: '/api/reviews' })).json().rounds[0].id).toBe(round.id);

    // Three reviewers: two answer as the linker decided, one says "unsure" now and then.
    for (const reviewer of ['ana', 'ben', 'cai']) {
      let n = 0;
      for (;;) {
        const next = await app.inject({ url: `/api/reviews/${round.id}/next?reviewer=${reviewer}` });
        if (next.statusCode === 204) break;
        const it = next.json();
        expect(it.question).toMatch(/same happening/);
        expect(it.caution).toMatch(/machine suggestions/);
        expect(it.sentence.text).toEqual(expect.any(String));
        expect(it.event.label).toEqual(expect.any(String));
        if (it.stratum === 'merge') expect(it.mergedFrom).toMatch(/^ev_/);
        else expect(it.mergedFrom).toBeNull();
        const verdict = reviewer === 'cai' && n % 5 === 0 ? 'unsure' : it.linked ? 'same' : 'different';
        const answered = await post(`/api/reviews/${round.id}/answers`, { item: it.item, reviewer, verdict });
        expect(answered.statusCode).toBe(200);
        n++;
      }
      expect(n).toBe(40);
    }
    // Every item has its three answers: nobody is handed more.
    expect((await app.inject({ url: `/api/reviews/${round.id}/next?reviewer=dee` })).statusCode).toBe(204);

    const report = (await app.inject({ url: `/api/reviews/${round.id}/report` })).json();
    expect(report).toMatchObject({ items: 40, answered: 40, complete: 40, answers: 120 });
    expect(report.reviewers.map((r: { reviewer: string }) => r.reviewer)).toEqual(['ana', 'ben', 'cai']);
    expect(report.reviewers[2].unsure).toBe(8);
    // They agree with each other (and with the linker) throughout.
    expect(report.alpha.overall).toBeCloseTo(1, 6);
    for (const r of report.reviewers) expect(r.errorRate).toBeLessThan(0.05);
    const p = report.quality.overall.precision;
    expect(p.value).toBeCloseTo(1, 6);
    expect(p.low).toBeLessThanOrEqual(p.value);
    expect(report.quality.byWeek.length).toBeGreaterThan(0);
    expect(report.quality.byWeek[0].week).toMatch(/^\d{4}-W\d\d$/);
    expect(report.quality.byOutlet.length).toBeGreaterThan(1);
    // Answers that agree with the linker everywhere leave the threshold where it is.
    // Merges and back-references are reviewed apart from links: their own estimates, and no part in the threshold's fit.
    const sampled = (stratum: string) => round.design.find((d: { stratum: string }) => d.stratum === stratum).sampled;
    const [merges, backReferences] = [sampled('merge'), sampled('back-reference')];
    expect(merges).toBeGreaterThan(0);
    expect(backReferences).toBeGreaterThan(0);
    expect(report.quality.overall.merges).toMatchObject({ value: 1, answers: merges });
    expect(report.quality.overall.backReferences).toMatchObject({ value: 1, answers: backReferences });
    expect(report.calibration).toMatchObject({ decided: 40 - merges - backReferences });
    expect(Math.abs(report.calibration.offset)).toBeLessThanOrEqual(0.15);
  });

  it('makes the corrections the answers call for, each in the corrections log and undoable, and leaves agreed items alone', async () => {
    const corrected = await linkingApp(rt);
    try {
      const round = (await post('/api/reviews', { size: 30, reviewersPerItem: 1, seed: 11 })).json();
      const stored = (await rt.store.getReviewRound(round.id))!;
      const link = stored.items.find((i) => i.linked && !i.mergedFrom && i.stratum !== 'back-reference')!;
      const miss = stored.items.find((i) => !i.linked)!;
      const merge = stored.items.find((i) => i.mergedFrom)!;
      const back = stored.items.find((i) => i.stratum === 'back-reference')!;
      for (const i of stored.items) {
        const verdict = [link, merge, back].includes(i) ? 'different' : i === miss ? 'same' : i.linked ? 'same' : 'different';
        await post(`/api/reviews/${round.id}/answers`, { item: i.item, reviewer: 'ana', verdict });
      }
      // Without a linker in this process, nothing is made.
      expect((await post(`/api/reviews/${round.id}/corrections`, {})).statusCode).toBe(503);
      const r = await corrected.inject({ method: 'POST', url: `/api/reviews/${round.id}/corrections`, payload: {} });
      expect(r.statusCode).toBe(200);
      const body = r.json();
      expect(body.agreed).toBe(26);
      expect(body.made.length + body.refused.length).toBe(4);
      // A merge found wrong is left to a person: which sentences came with the absorbed event is not kept.
      expect(body.refused).toContainEqual({ item: merge.item, reason: expect.stringMatching(/split .* by hand/) });
      // So is a back-reference: detaching it would give the sentence a second event of its own.
      expect(body.refused).toContainEqual({ item: back.item, reason: expect.stringMatching(/back-reference found wrong/) });
      expect(body.made.map((m: { item: number }) => m.item)).toContain(link.item);
      expect(body.made.find((m: { item: number }) => m.item === link.item).kind).toBe('detach');
      const log = (await app.inject({ url: '/api/corrections?limit=5' })).json().corrections;
      expect(log.some((c: { note: string }) => c.note === `review round ${round.id}, item ${link.item}`)).toBe(true);
      // Undoable like any other correction.
      const detach = body.made.find((m: { item: number }) => m.item === link.item).correction;
      expect((await corrected.inject({ method: 'POST', url: `/api/corrections/${detach}/undo`, payload: {} })).statusCode).toBe(200);
    } finally {
      await corrected.close();
    }
  });

  it('replaces a reviewer’s earlier answer, and refuses malformed and hostile requests with a clear error', async () => {
    const round = (await post('/api/reviews', { size: 5, seed: 1 })).json();
    await post(`/api/reviews/${round.id}/answers`, { item: 0, reviewer: 'ana', verdict: 'same' });
    await post(`/api/reviews/${round.id}/answers`, { item: 0, reviewer: 'ana', verdict: 'different' });
    expect((await app.inject({ url: `/api/reviews/${round.id}/report` })).json()).toMatchObject({ answers: 1 });
    const cases: [string, string, object | undefined, number][] = [
      ['POST', '/api/reviews', { size: 0 }, 400],
      ['POST', '/api/reviews', { size: 10, admin: true }, 400],
      ['POST', '/api/reviews', { size: 10, margin: 2 }, 400],
      ['POST', '/api/reviews', { size: 10, from: 'yesterday' }, 400],
      ['POST', '/api/reviews', { size: 10, from: '2099-01-01' }, 409],
      ['POST', `/api/reviews/${round.id}/answers`, { item: 0, reviewer: 'ana', verdict: 'maybe' }, 400],
      ['POST', `/api/reviews/${round.id}/answers`, { item: 0, reviewer: 'a\u0000b', verdict: 'same' }, 400],
      ['POST', `/api/reviews/${round.id}/answers`, { item: 0, reviewer: 'x'.repeat(101), verdict: 'same' }, 400],
      ['POST', `/api/reviews/${round.id}/answers`, { item: 999, reviewer: 'ana', verdict: 'same' }, 404],
      ['POST', '/api/reviews/rv_000000000000/answers', { item: 0, reviewer: 'ana', verdict: 'same' }, 404],
      ['GET', '/api/reviews/../../etc/report', undefined, 404],
      ['GET', '/api/reviews/rv_zzz/report', undefined, 400],
      ['GET', `/api/reviews/${round.id}/next`, undefined, 400],
    ];
    for (const [method, url, payload, status] of cases) {
      const r = await app.inject({ method: method as 'GET' | 'POST', url, ...(payload ? { payload } : {}) });
      expect(r.statusCode, `${method} ${url} ${JSON.stringify(payload)}`).toBe(status);
      if (status !== 404 || url.startsWith('/api/reviews/rv_')) expect(r.json().error.code).toMatch(/^STRAND_/);
    }
    expect((await app.inject({ url: `/api/reviews/${round.id}/report` })).json()).toMatchObject({ answers: 1 });
  });
});
