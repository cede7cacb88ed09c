import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { exportDemoCommand } from '../../src/cli/commands/eval.js';
import { DEMO_DIR } from '../../src/cli/common.js';
import { demoEvalInput } from '../../src/eval/demo-input.js';
import { simulateReviews } from '../../src/eval/review-simulation.js';
import { runEval } from '../../src/eval/run-eval.js';
import { createLogger } from '../../src/logger.js';
import { createNlp } from '../../src/text/nlp.js';
import { cli } from '../helpers/cli-in-process.js';
import { testConfig } from '../helpers/runtime.js';

// The invented demo exercises the mechanics only; its figures say nothing about real news.
describe('simulated reviews on an annotated corpus', () => {
  it('judges the linker’s decisions from gold, fits the threshold per run and checks the estimates against the truth', async () => {
    const config = testConfig();
    const input = await demoEvalInput(createNlp(), DEMO_DIR, config);
    const row = await simulateReviews(
      { name: 'demo', source: 'demo', input },
      {
        config,
        logger: createLogger('silent'),
        thresholds: [0.15, 0.25],
        reviews: 60,
        noise: 0.1,
        estimateReviews: 80,
        runs: 3,
        margin: 0.1,
      },
    );
    expect(row.judgeable).toBeGreaterThan(50);
    expect(row.judgeable).toBeLessThanOrEqual(row.candidates);
    expect(row.truePrecision).toBeGreaterThan(0);
    expect(row.trueRecall).toBeGreaterThan(0);
    // The linker's score at the configured threshold and over the sweep is the one strandline eval reports.
    const report = await runEval([{ name: 'demo', source: 'demo', input }], {
      config,
      settings: ['gold'],
      thresholds: [0.15, 0.25],
      sweep: 'every',
      logger: createLogger('silent'),
    });
    const linker = report.corpora[0]!.settings[0]!.systems[0]!;
    expect(row.conllBefore).toBeCloseTo(linker.partition.conllF1, 9);
    expect(row.best.conll).toBeCloseTo(linker.best!.conll.value, 9);
    expect(row.runs).toHaveLength(3);
    for (const r of row.runs) {
      expect(Math.abs(r.offset)).toBeLessThanOrEqual(0.15);
      expect(r.threshold).toBeCloseTo(config.link.threshold + r.offset, 3);
      expect(r.regretAfter).toBeCloseTo(row.best.conll - r.conllAfter, 12);
      expect(r.precision.low).toBeLessThanOrEqual(r.precision.value);
      expect(r.precision.value).toBeLessThanOrEqual(r.precision.high);
    }
  });

  it('runs from the command line, and refuses malformed options with a clear message', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strandline-review-sim-'));
    expect(await exportDemoCommand(join(dir, 'demo'), { logLevel: 'silent' })).toBe(0);
    const ok = await cli(
      'review',
      'simulate',
      '--corpus',
      join(dir, 'demo'),
      '--reviews',
      '40',
      '--estimate-reviews',
      '40',
      '--runs',
      '2',
      '--log-level',
      'silent',
    );
    expect(ok.status).toBe(0);
    expect(ok.stdout).toMatch(/^corpus .*regret at configured.*\ndemo +\d+ /);
    for (const [flag, value, message] of [
      ['--noise', '0.9', /--noise must be a number from 0 to 0.5/],
      ['--noise', '1e9', /--noise must be a number/],
      ['--noise', 'NaN', /--noise must be a number/],
      ['--runs', '0', /--runs must be a whole number from 1 to 1000/],
      ['--reviews', '99999999999', /--reviews must be a whole number/],
    ] as const) {
      const r = await cli('review', 'simulate', '--corpus', join(dir, 'demo'), flag, value);
      expect(r.status, `${flag} ${value}`).not.toBe(0);
      expect(r.stderr).toMatch(message);
    }
    const none = await cli('review', 'simulate', '--log-level', 'silent');
    expect([none.status, none.stderr]).toEqual([2, expect.stringMatching(/give corpus folders with --corpus/)]);
  });
});
