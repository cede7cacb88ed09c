import { munkres } from 'munkres';
import { describe, expect, it } from 'vitest';
import {
  type Partition,
  type Score,
  b3Score,
  blancScore,
  ceafScore,
  leaScore,
  mucScore,
  scorePartitions,
} from '../../src/eval/partition-metrics.js';
import { seededRandom as rng } from '../../src/seeded-random.js';

const P = (s: string): Partition =>
  s
    .trim()
    .split(/\}\s*\{/)
    .map((c) => c.replace(/[{}]/g, '').trim().split(/\s+/).filter(Boolean));
const KEY_A = P('{a} {b c} {d e f}');
const TOL = 1e-4;

function close(actual: Score, [r, p, f]: [number, number, number?]): void {
  expect(actual.recall).toBeCloseTo(r, 4);
  expect(Math.abs(actual.recall - r)).toBeLessThan(TOL);
  expect(Math.abs(actual.precision - p)).toBeLessThan(TOL);
  if (f !== undefined) expect(Math.abs(actual.f1 - f)).toBeLessThan(TOL);
}

// Values from the reference coreference scorer's test cases, conll/reference-coreference-scorers,
// file test/CorefMetricTestConfig.pm, [recall, precision, F1] (as listed in checks.md).
describe('partition scores against the reference scorer test cases (CorefMetricTestConfig.pm)', () => {
  it('A1: identical response scores 1 everywhere', () => {
    const s = scorePartitions(KEY_A, KEY_A);
    for (const m of [s.muc, s.b3, s.ceafm, s.ceafe, s.blanc]) close(m, [1, 1, 1]);
  });

  it('A2: response {a} {d e}', () => {
    const r = P('{a} {d e}');
    close(mucScore(KEY_A, r), [1 / 3, 1, 0.5]);
    close(b3Score(KEY_A, r), [7 / 18, 1, 14 / 25]);
    close(ceafScore(KEY_A, r, 'mention'), [0.5, 1, 0.66667]);
    close(ceafScore(KEY_A, r, 'entity'), [0.6, 0.9, 0.72]);
    close(blancScore(KEY_A, r), [0.21591, 1, 0.35385]);
  });

  it('A3: response {a} {b c x} {d e f y} {z} (mentions the key lacks)', () => {
    const r = P('{a} {b c x} {d e f y} {z}');
    close(mucScore(KEY_A, r), [1, 3 / 5, 0.75]);
    close(b3Score(KEY_A, r), [1, (4 + 7 / 12) / 9, 110 / 163]);
    close(ceafScore(KEY_A, r, 'mention'), [1, 0.66667, 0.8]);
    close(ceafScore(KEY_A, r, 'entity'), [0.88571, 0.66429, 0.75918]);
    close(blancScore(KEY_A, r), [1, 0.42593, 0.59717]);
  });

  it('A4: response {a} {b c x} {d y} {z}', () => {
    const r = P('{a} {b c x} {d y} {z}');
    close(mucScore(KEY_A, r), [1 / 3, 1 / 3, 1 / 3]);
    close(b3Score(KEY_A, r), [5 / 9, 17 / 42, 0.46832]);
    close(ceafScore(KEY_A, r, 'mention'), [0.66667, 0.57143, 0.61538]);
    close(ceafScore(KEY_A, r, 'entity'), [0.73333, 0.55, 0.62857]);
    close(blancScore(KEY_A, r), [0.35227, 0.27206, 0.30357]);
  });

  it('A10: all singletons', () => {
    const r = P('{a} {b} {c} {d} {e} {f}');
    close(mucScore(KEY_A, r), [0, 0, 0]);
    close(b3Score(KEY_A, r), [3 / 6, 1, 2 / 3]);
    close(blancScore(KEY_A, r), [0.5, 0.36667, 0.42308]);
  });

  it('A11: everything in one cluster', () => {
    const r = P('{a b c d e f}');
    close(mucScore(KEY_A, r), [1, 3 / 5, 0.75]);
    close(b3Score(KEY_A, r), [1, 7 / 18, 14 / 25]);
    close(blancScore(KEY_A, r), [0.5, 0.13333, 0.21053]);
  });

  it('B1: key {a b} {c d e}, response {b c x} {d e}: BLANC F1 7/24', () => {
    expect(Math.abs(blancScore(P('{a b} {c d e}'), P('{b c x} {d e}')).f1 - 7 / 24)).toBeLessThan(TOL);
  });

  it('D1: the B-cubed paper example (Bagga & Baldwin 1998)', () => {
    const key = P('{1 2 3 4 5} {6 7} {8 9 A B C}');
    const r = P('{1 2 3 4 5} {6 7 8 9 A B C}');
    close(b3Score(key, r), [1, 16 / 21, 0.864864865]);
    close(mucScore(key, r), [1, 9 / 10, 0.947368421]);
  });

  it('N1: all-singleton key, identical response: MUC 0, BLANC 1', () => {
    const key = P('{a} {b} {c}');
    close(mucScore(key, key), [0, 0, 0]);
    close(blancScore(key, key), [1, 1, 1]);
  });
});

// LEA values as computed by the coval scorer (ns-moosavi/coval, coval/eval/evaluator.py) on
// the same key (Moosavi & Strube 2016; checks.md).
describe('LEA against coval', () => {
  it.each([
    ['A2', '{a} {d e}', [0.3333, 1, 0.5]],
    ['A3', '{a} {b c x} {d e f y} {z}', [1, 0.4444, 0.6154]],
    ['A4', '{a} {b c x} {d y} {z}', [0.5, 0.2857, 0.3636]],
    ['A10', '{a} {b} {c} {d} {e} {f}', [0.1667, 0.1667, 0.1667]],
    ['A11', '{a b c d e f}', [0.8333, 0.2667, 0.404]],
  ] as const)('%s', (_case, response, expected) => {
    const s = leaScore(KEY_A, P(response));
    // coval prints four decimals, so the check is to its rounding (5e-5) plus float noise.
    expect(Math.abs(s.recall - expected[0])).toBeLessThan(1e-4);
    expect(Math.abs(s.precision - expected[1])).toBeLessThan(1e-4);
    expect(Math.abs(s.f1 - expected[2])).toBeLessThan(1e-4);
  });
});

describe('CoNLL F1', () => {
  it('is the mean of the MUC, B3 and CEAF-e F1 (CoNLL-2011/2012 shared tasks; common practice)', () => {
    const r = P('{a} {b c x} {d y} {z}');
    const s = scorePartitions(KEY_A, r);
    expect(s.conllF1).toBeCloseTo((1 / 3 + 0.46832 + 0.62857) / 3, 4);
  });
});

function permutations(n: number): number[][] {
  if (n === 0) return [[]];
  return permutations(n - 1).flatMap((p) => Array.from({ length: n }, (_, i) => [...p.slice(0, i), n - 1, ...p.slice(i)]));
}

describe('optimal assignment (Kuhn-Munkres) against brute force', () => {
  it('finds the maximum-weight assignment on 200 random matrices up to 6 x 6, square and rectangular', () => {
    const rand = rng(20261201);
    for (let t = 0; t < 200; t++) {
      const rows = 1 + Math.floor(rand() * 6);
      const cols = 1 + Math.floor(rand() * 6);
      const w = Array.from({ length: rows }, () => Array.from({ length: cols }, () => Math.floor(rand() * 10)));
      const got = munkres(w.map((r) => r.map((x) => -x))).reduce((s, [r, c]) => s + w[r]![c]!, 0);
      // Brute force: every way of giving the smaller side distinct partners on the larger.
      const small = Math.min(rows, cols);
      const big = Math.max(rows, cols);
      let best = 0;
      for (const perm of permutations(big)) {
        let s = 0;
        for (let i = 0; i < small; i++) s += rows <= cols ? w[i]![perm[i]!]! : w[perm[i]!]![i]!;
        best = Math.max(best, s);
      }
      expect(got).toBe(best);
    }
  });

  it('gives CEAF the same best alignment as Kuhn-Munkres on the whole matrix, on 300 random partitions of up to 60 mentions (chains settled first)', () => {
    const rand = rng(20261204);
    for (let t = 0; t < 300; t++) {
      const n = 5 + Math.floor(rand() * 56);
      const mentions = Array.from({ length: n }, (_, i) => `m${i}`);
      // Contiguous runs, as a threshold sweep's clusterings chain neighbours; some mentions on one side only.
      const runs = (cut: number): string[][] => {
        const out: string[][] = [[]];
        for (const m of mentions) {
          if (rand() < 0.1) continue;
          if (rand() < cut) out.push([]);
          out[out.length - 1]!.push(m);
        }
        return out.filter((c) => c.length > 0);
      };
      const key = runs(0.3);
      const response = rand() < 0.5 ? runs(0.2) : runs(0.5);
      for (const kind of ['mention', 'entity'] as const) {
        const phi = (k: string[], r: string[]) => {
          const o = k.filter((x) => r.includes(x)).length;
          return kind === 'mention' ? o : (2 * o) / (k.length + r.length);
        };
        const matrix = key.map((k) => response.map((r) => -phi(k, r)));
        const best = munkres(matrix).reduce((s, [r, c]) => s - matrix[r]![c]!, 0);
        const self = key.reduce((s, c) => s + phi(c, c), 0);
        expect(ceafScore(key, response, kind).recall).toBeCloseTo(best / self, 10);
      }
    }
  });

  it('gives CEAF the same best alignment as trying every alignment, on random partitions', () => {
    const rand = rng(7);
    const randomPartition = (mentions: string[]): string[][] => {
      const k = 1 + Math.floor(rand() * 4);
      const clusters: string[][] = Array.from({ length: k }, () => []);
      for (const m of mentions) if (rand() < 0.85) clusters[Math.floor(rand() * k)]!.push(m);
      return clusters.filter((c) => c.length > 0);
    };
    for (let t = 0; t < 100; t++) {
      const key = randomPartition(['a', 'b', 'c', 'd', 'e', 'f', 'g']);
      const response = randomPartition(['a', 'b', 'c', 'd', 'e', 'f', 'x', 'y']);
      if (key.length === 0 || response.length === 0) continue;
      for (const kind of ['mention', 'entity'] as const) {
        const phi = (k: string[], r: string[]) => {
          const o = k.filter((x) => r.includes(x)).length;
          return kind === 'mention' ? o : (2 * o) / (k.length + r.length);
        };
        let best = 0;
        const big = Math.max(key.length, response.length);
        for (const perm of permutations(big)) {
          let s = 0;
          for (let i = 0; i < key.length; i++) if (perm[i]! < response.length) s += phi(key[i]!, response[perm[i]!]!);
          best = Math.max(best, s);
        }
        const self = key.reduce((s, c) => s + phi(c, c), 0);
        expect(ceafScore(key, response, kind).recall).toBeCloseTo(best / self, 10);
      }
    }
  });
});
