import { describe, expect, it } from 'vitest';
import { Calibration } from '../../src/link/calibration.js';

const options = { mode: 'stream' as const, anchor: 0.3, slope: 0.09, priorMentions: 20, priorShare: 0.35 };

describe('the threshold calibrated on the stream', () => {
  it('starts from the prior: base + slope x ln((1 - share) / share)', () => {
    const c = new Calibration(0.2, options);
    expect(c.threshold()).toBeCloseTo(0.2 + 0.09 * Math.log(0.65 / 0.35), 12);
  });

  it('is the base threshold where half the best candidates score high', () => {
    const c = new Calibration(0.2, options);
    c.load({ mentions: 1_000_000, high: 500_000 });
    expect(Math.abs(c.threshold() - 0.2)).toBeLessThan(1e-4);
  });

  it('asks for more in a stream of mostly new events and less in one rich in repeats', () => {
    const fresh = new Calibration(0.2, options);
    fresh.add({ mentions: 1000, high: 140 });
    const repeats = new Calibration(0.2, options);
    repeats.add({ mentions: 1000, high: 550 });
    expect(fresh.threshold()).toBeGreaterThan(0.3);
    expect(repeats.threshold()).toBeLessThan(0.2);
    expect(fresh.threshold()).toBeGreaterThan(repeats.threshold());
  });

  it('counts a plan in progress before it is applied, the same as after', () => {
    const a = new Calibration(0.2, options);
    const b = new Calibration(0.2, options);
    b.add({ mentions: 10, high: 9 });
    expect(a.threshold({ mentions: 10, high: 9 })).toBe(b.threshold());
  });

  it('stays between its floor and ceiling whatever the stream', () => {
    const all = new Calibration(0.2, { ...options, slope: 1 });
    all.add({ mentions: 1e6, high: 1e6 });
    const none = new Calibration(0.2, { ...options, slope: 1 });
    none.add({ mentions: 1e6, high: 0 });
    expect(all.threshold()).toBe(0.05);
    expect(none.threshold()).toBe(0.9);
  });

  it('keeps the configured threshold when fixed', () => {
    const c = new Calibration(0.27, { ...options, mode: 'fixed' });
    c.add({ mentions: 1000, high: 10 });
    expect(c.threshold()).toBe(0.27);
  });

  it('resumes from a stored tally exactly', () => {
    const a = new Calibration(0.2, options);
    a.add({ mentions: 37, high: 12 });
    a.add({ mentions: 5, high: 4 });
    const b = new Calibration(0.2, options);
    b.load(a.current());
    expect(b.threshold()).toBe(a.threshold());
  });

  it("moves every threshold by the operator's adjustment, calibrated or fixed, and back when it is rolled back", () => {
    const stream = new Calibration(0.2, options);
    stream.add({ mentions: 1000, high: 300 });
    const before = stream.threshold();
    stream.setOffset(-0.04);
    expect(stream.threshold()).toBeCloseTo(before - 0.04, 12);
    stream.setOffset(0);
    expect(stream.threshold()).toBe(before);
    const fixed = new Calibration(0.27, { ...options, mode: 'fixed' });
    fixed.setOffset(0.05);
    expect(fixed.threshold()).toBeCloseTo(0.32, 12);
  });
});
