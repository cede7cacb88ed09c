import type { FastifyInstance } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createLogger } from '../../src/logger.js';
import { type Runtime, createRuntime } from '../../src/runtime.js';
import { demoApi, linkingApp, testConfig } from '../helpers/runtime.js';

// The demo exercises the mechanics; it says nothing about which threshold suits real news.
describe('the link threshold through the API', () => {
  let rt: Runtime;
  let demo: FastifyInstance;
  let app: FastifyInstance;
  beforeAll(async () => {
    ({ rt, app: demo } = await demoApi());
    app = await linkingApp(rt);
  });
  afterAll(async () => {
    await app.close();
    await demo.close();
    await rt.close();
  });
  const post = (url: string, payload: object) => app.inject({ method: 'POST', url, payload });
  const state = async () => (await app.inject({ url: '/api/link-threshold' })).json();
  const configured = () => rt.config.link.threshold;

  it('sets an adjustment by hand, keeps each in the corrections log, and rolls back to the one before', async () => {
    expect(await state()).toMatchObject({ configured: configured(), offset: 0, base: configured(), current: null, history: [] });
    const links = (await rt.store.counts()).links;

    const first = await post('/api/link-threshold', { offset: -0.05, note: 'our desk links too little' });
    expect(first.statusCode).toBe(200);
    expect(first.json()).toMatchObject({ offset: -0.05, base: Math.round((configured() - 0.05) * 1e4) / 1e4 });
    expect(rt.linker.thresholdAdjustment).toBe(-0.05);
    const second = (await post('/api/link-threshold', { offset: -0.08 })).json();
    expect(second.history.map((h: { kind: string; from: number; to: number }) => [h.kind, h.from, h.to])).toEqual([
      ['threshold', -0.05, -0.08],
      ['threshold', 0, -0.05],
    ]);
    expect(second.history[1]).toMatchObject({ note: 'our desk links too little', round: null, by: 'local', undoneBy: null });
    // Nothing already linked changes.
    expect((await rt.store.counts()).links).toBe(links);
    // The corrections log lists them with the move.
    const log = (await app.inject({ url: '/api/corrections?limit=2' })).json();
    expect(log.corrections[0]).toMatchObject({ kind: 'threshold', threshold: { from: -0.05, to: -0.08, round: null } });

    // A restarted linker reads the adjustment in effect from the store.
    const restarted = await createRuntime(testConfig(), createLogger('silent'), rt.store);
    expect(restarted.linker.thresholdAdjustment).toBe(-0.08);

    const back = await post('/api/link-threshold/rollback', {});
    expect(back.statusCode).toBe(200);
    expect(back.json()).toMatchObject({ offset: -0.05, current: second.history[1].correction });
    expect(rt.linker.thresholdAdjustment).toBe(-0.05);
    expect((await post('/api/link-threshold/rollback', { note: 'as configured again' })).json()).toMatchObject({
      offset: 0,
      current: null,
    });
    expect(rt.linker.thresholdAdjustment).toBe(0);
    const none = await post('/api/link-threshold/rollback', {});
    expect(none.statusCode).toBe(409);
    expect(none.json().error.code).toBe('STRAND_CORRECTION_CONFLICT');
  });

  it("applies a review round's fit on top of the adjustment in effect, with the round and its held-out F1", async () => {
    const round = (await post('/api/reviews', { size: 60, reviewersPerItem: 1, seed: 3 })).json();
    const items = (await rt.store.getReviewRound(round.id))!.items;
    // The reviewer finds links right only where they cleared the bar by 0.05 or more.
    for (const it of items)
      await post(`/api/reviews/${round.id}/answers`, {
        item: it.item,
        reviewer: 'ana',
        verdict: it.score - it.bar >= 0.05 ? 'same' : 'different',
      });
    const fit = (await app.inject({ url: `/api/reviews/${round.id}/report` })).json().calibration;
    expect(fit.placed).toBe(true);
    expect(fit.offset).toBeGreaterThan(0);

    await post('/api/link-threshold', { offset: -0.02 });
    const applied = await post('/api/link-threshold', { round: round.id, note: 'fitted' });
    expect(applied.statusCode).toBe(200);
    const s = applied.json();
    expect(s.offset).toBeCloseTo(-0.02 + fit.offset, 4);
    expect(s.history[0]).toMatchObject({ round: round.id, from: -0.02, heldOutF1: { before: fit.cvF1Before, after: fit.cvF1After } });
    expect(rt.linker.thresholdAdjustment).toBeCloseTo(-0.02 + fit.offset, 4);
    // Undoing it through the corrections log is the same as rolling it back.
    expect((await post(`/api/corrections/${s.current}/undo`, {})).statusCode).toBe(200);
    expect(await state()).toMatchObject({ offset: -0.02 });
    await post('/api/link-threshold/rollback', {});
  });

  it('refuses malformed, out-of-range and pointless moves with a clear error, and changes nothing', async () => {
    const agreeing = (await post('/api/reviews', { size: 10, reviewersPerItem: 1, seed: 9 })).json();
    for (const it of (await rt.store.getReviewRound(agreeing.id))!.items)
      await post(`/api/reviews/${agreeing.id}/answers`, { item: it.item, reviewer: 'ana', verdict: 'same' });
    const cases: [object, number, string][] = [
      [{}, 400, 'STRAND_REQUEST_INVALID'],
      [{ offset: 0.1, round: agreeing.id }, 400, 'STRAND_REQUEST_INVALID'],
      [{ offset: 0.9 }, 400, 'STRAND_REQUEST_INVALID'],
      [{ offset: '-0.1; DROP TABLE corrections' }, 400, 'STRAND_REQUEST_INVALID'],
      [{ offset: -configured() - 0.1 }, 400, 'STRAND_REQUEST_INVALID'],
      [{ offset: 0 }, 409, 'STRAND_CORRECTION_CONFLICT'],
      [{ offset: 0.05, threshold: 0.1 }, 400, 'STRAND_REQUEST_INVALID'],
      [{ offset: 0.05, note: 'x'.repeat(2001) }, 400, 'STRAND_REQUEST_INVALID'],
      [{ round: 'rv_000000000000' }, 404, 'STRAND_NOT_FOUND'],
      [{ round: '../../etc/passwd' }, 400, 'STRAND_REQUEST_INVALID'],
      // Every answer agrees with the linker: nothing places the threshold.
      [{ round: agreeing.id }, 409, 'STRAND_CORRECTION_CONFLICT'],
    ];
    for (const [payload, status, code] of cases) {
      const r = await post('/api/link-threshold', payload);
      expect(r.statusCode, JSON.stringify(payload).slice(0, 80)).toBe(status);
      expect(r.json().error.code).toBe(code);
    }
    expect(await state()).toMatchObject({ offset: 0, current: null });
    expect(rt.linker.thresholdAdjustment).toBe(0);
  });

  it('is not offered to move by a process that does not link', async () => {
    const apiOnly = await linkingApp(rt, { corrections: undefined });
    try {
      expect((await apiOnly.inject({ url: '/api/link-threshold' })).statusCode).toBe(200);
      const r = await apiOnly.inject({ method: 'POST', url: '/api/link-threshold', payload: { offset: 0.05 } });
      expect(r.statusCode).toBe(503);
    } finally {
      await apiOnly.close();
    }
  });
});
