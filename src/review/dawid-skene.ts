/**
 * Combining several reviewers' answers with Dawid and Skene's EM (Dawid & Skene 1979,
 * "Maximum likelihood estimation of observer error-rates using the EM algorithm", Applied
 * Statistics 28(1)). Each reviewer has a confusion matrix (how often they answer l when the
 * truth is k); the truth of each item is a latent class. Starting from the majority vote,
 * the M-step estimates the class shares and the matrices from the current beliefs, the
 * E-step updates each item's belief from them, until the beliefs settle. A reviewer who is
 * often wrong, or answers the same whatever the truth, counts for less than a careful one:
 * this is where it beats a majority vote.
 */

/** One answer: reviewer `reviewer` said class `answer` (0..classes-1) about item `item`. */
export interface Answer {
  item: string;
  reviewer: string;
  answer: number;
}

export interface DawidSkeneResult {
  /** Per item, the probability of each class. */
  posteriors: Map<string, number[]>;
  /** Per item, the most probable class. */
  labels: Map<string, number>;
  /** The estimated share of each class. */
  priors: number[];
  /** Per reviewer, confusion[k][l]: the probability of answering l when the truth is k. */
  confusion: Map<string, number[][]>;
  /** Per reviewer, the probability of a wrong answer, weighting each class by its share. */
  errorRates: Map<string, number>;
  iterations: number;
}

/** Added to every count so that a matrix never holds a hard 0 (a reviewer seen on few items). */
const SMOOTHING = 0.01;

/** The majority vote of each item (ties to the lower class). */
export function majorityVote(answers: readonly Answer[], classes: number): Map<string, number> {
  const votes = new Map<string, number[]>();
  for (const a of answers) (votes.get(a.item) ?? votes.set(a.item, new Array(classes).fill(0)).get(a.item)!)[a.answer]!++;
  return new Map([...votes].map(([item, v]) => [item, v.indexOf(Math.max(...v))]));
}

/** Runs EM to convergence (largest belief change under `tolerance`) or `maxIterations`. */
export function dawidSkene(
  answers: readonly Answer[],
  classes = 2,
  o: { maxIterations?: number; tolerance?: number } = {},
): DawidSkeneResult {
  const maxIterations = o.maxIterations ?? 200;
  const tolerance = o.tolerance ?? 1e-6;
  for (const a of answers) {
    if (!Number.isInteger(a.answer) || a.answer < 0 || a.answer >= classes)
      throw new RangeError(`answer ${a.answer} is not a class of ${classes}`);
  }
  const items = [...new Set(answers.map((a) => a.item))];
  const reviewers = [...new Set(answers.map((a) => a.reviewer))];
  const byItem = new Map<string, Answer[]>(items.map((i) => [i, []]));
  for (const a of answers) byItem.get(a.item)!.push(a);

  // Start from the vote shares of each item.
  let beliefs = new Map<string, number[]>(
    items.map((i) => {
      const v = new Array(classes).fill(0);
      for (const a of byItem.get(i)!) v[a.answer]++;
      const total = v.reduce((s, x) => s + x, 0);
      return [i, v.map((x) => x / total)];
    }),
  );
  let priors = new Array<number>(classes).fill(1 / classes);
  let confusion = new Map<string, number[][]>();
  let iterations = 0;
  for (; iterations < maxIterations; iterations++) {
    // M-step.
    priors = new Array(classes).fill(0);
    for (const b of beliefs.values()) b.forEach((p, k) => (priors[k]! += p / items.length));
    confusion = new Map(reviewers.map((r) => [r, Array.from({ length: classes }, () => new Array(classes).fill(SMOOTHING))]));
    for (const a of answers) beliefs.get(a.item)!.forEach((p, k) => (confusion.get(a.reviewer)![k]![a.answer]! += p));
    for (const m of confusion.values())
      for (const row of m) {
        const total = row.reduce((s, x) => s + x, 0);
        row.forEach((x, l) => (row[l] = x / total));
      }
    // E-step, in logs so that many answers do not underflow.
    const next = new Map<string, number[]>();
    let change = 0;
    for (const item of items) {
      const log = priors.map((p) => Math.log(Math.max(p, 1e-12)));
      for (const a of byItem.get(item)!) for (let k = 0; k < classes; k++) log[k]! += Math.log(confusion.get(a.reviewer)![k]![a.answer]!);
      const top = Math.max(...log);
      const raw = log.map((x) => Math.exp(x - top));
      const total = raw.reduce((s, x) => s + x, 0);
      const b = raw.map((x) => x / total);
      const before = beliefs.get(item)!;
      for (let k = 0; k < classes; k++) change = Math.max(change, Math.abs(b[k]! - before[k]!));
      next.set(item, b);
    }
    beliefs = next;
    if (change < tolerance) {
      iterations++;
      break;
    }
  }
  const labels = new Map([...beliefs].map(([i, b]) => [i, b.indexOf(Math.max(...b))]));
  const errorRates = new Map([...confusion].map(([r, m]) => [r, m.reduce((s, row, k) => s + priors[k]! * (1 - row[k]!), 0)]));
  return { posteriors: beliefs, labels, priors, confusion, errorRates, iterations };
}
