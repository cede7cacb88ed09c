import { describe, expect, it } from 'vitest';
import { seededRandom } from '../../src/seeded-random.js';
import { type Answer, dawidSkene, majorityVote } from '../../src/review/dawid-skene.js';

// Simulations in the manner of Dawid & Skene 1979 (Applied Statistics 28(1)): items with a
// hidden class (1 = same event, 0 = different), reviewers who answer through a confusion
// matrix of their own. Seeded, so that each run is the same.
interface Reviewer {
  name: string;
  /** P(answer "same" | truly same), P(answer "same" | truly different). */
  sameIfSame: number;
  sameIfDifferent: number;
}

function simulate(reviewers: Reviewer[], items: number, shareSame: number, seed: number) {
  const rnd = seededRandom(seed);
  const truth = new Map<string, number>();
  const answers: Answer[] = [];
  for (let i = 0; i < items; i++) {
    const item = `link-${i}`;
    const t = rnd() < shareSame ? 1 : 0;
    truth.set(item, t);
    for (const r of reviewers) answers.push({ item, reviewer: r.name, answer: rnd() < (t ? r.sameIfSame : r.sameIfDifferent) ? 1 : 0 });
  }
  return { truth, answers };
}

const accuracy = (labels: Map<string, number>, truth: Map<string, number>) =>
  [...truth].filter(([i, t]) => labels.get(i) === t).length / truth.size;

describe('Dawid–Skene combination of reviewers', () => {
  it('recovers each of 5 reviewers’ error rates within 0.05 on 500 items', () => {
    const reviewers: Reviewer[] = [
      { name: 'r1', sameIfSame: 0.95, sameIfDifferent: 0.05 },
      { name: 'r2', sameIfSame: 0.9, sameIfDifferent: 0.15 },
      { name: 'r3', sameIfSame: 0.8, sameIfDifferent: 0.1 },
      { name: 'r4', sameIfSame: 0.85, sameIfDifferent: 0.3 },
      { name: 'r5', sameIfSame: 0.7, sameIfDifferent: 0.2 },
    ];
    const share = 0.4;
    const { answers } = simulate(reviewers, 500, share, 17);
    const got = dawidSkene(answers, 2);
    expect(got.priors[1]).toBeCloseTo(share, 1);
    for (const r of reviewers) {
      const m = got.confusion.get(r.name)!;
      expect(Math.abs(m[1]![1]! - r.sameIfSame), `${r.name} when same`).toBeLessThan(0.05);
      expect(Math.abs(m[0]![1]! - r.sameIfDifferent), `${r.name} when different`).toBeLessThan(0.05);
      const trueError = share * (1 - r.sameIfSame) + (1 - share) * r.sameIfDifferent;
      expect(Math.abs(got.errorRates.get(r.name)! - trueError), `${r.name} error rate`).toBeLessThan(0.05);
    }
  });

  it('beats the majority vote when two of five reviewers are unreliable', () => {
    // Two careless reviewers who mostly say "same" whatever the truth.
    const reviewers: Reviewer[] = [
      { name: 'careful-1', sameIfSame: 0.85, sameIfDifferent: 0.15 },
      { name: 'careful-2', sameIfSame: 0.8, sameIfDifferent: 0.2 },
      { name: 'careful-3', sameIfSame: 0.8, sameIfDifferent: 0.15 },
      { name: 'careless-1', sameIfSame: 0.9, sameIfDifferent: 0.85 },
      { name: 'careless-2', sameIfSame: 0.95, sameIfDifferent: 0.8 },
    ];
    for (const seed of [1, 2, 3]) {
      const { truth, answers } = simulate(reviewers, 500, 0.4, seed);
      const em = accuracy(dawidSkene(answers, 2).labels, truth);
      const vote = accuracy(majorityVote(answers, 2), truth);
      expect(em, `seed ${seed}: EM ${em} against vote ${vote}`).toBeGreaterThan(vote + 0.02);
    }
  });

  it('takes items with different numbers of answers, and refuses an answer outside the classes', () => {
    const reviewers: Reviewer[] = ['a', 'b', 'c', 'd'].map((name) => ({ name, sameIfSame: 0.85, sameIfDifferent: 0.15 }));
    const { truth, answers } = simulate(reviewers, 300, 0.5, 5);
    const rnd = seededRandom(9);
    // Each reviewer answered about half the items; every item keeps at least one answer.
    const kept = answers.filter((a, i) => i % 4 === 0 || rnd() < 0.5);
    const got = dawidSkene(kept, 2);
    expect(got.labels.size).toBe(300);
    // Equally good reviewers: EM is about as right as the vote (they differ on ties).
    expect(accuracy(got.labels, truth)).toBeGreaterThan(0.85);
    expect(Math.abs(accuracy(got.labels, truth) - accuracy(majorityVote(kept, 2), truth))).toBeLessThan(0.03);
    expect(() => dawidSkene([{ item: 'x', reviewer: 'a', answer: 2 }], 2)).toThrow(/not a class/);
  });
});
