import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { cli } from '../helpers/cli-in-process.js';
import { DEMO_DIR } from '../../src/cli/common.js';
import { evalCommand, exportDemoCommand, parseThresholds } from '../../src/cli/commands/eval.js';
import { demoEvalInput } from '../../src/eval/demo-input.js';
import { formatReport } from '../../src/eval/format-report.js';
import { htmlReport } from '../../src/eval/html-report.js';
import type { EvalCorpus } from '../../src/eval/corpus.js';
import { checkEvalInput } from '../../src/eval/eval-input.js';
import type { EvalReport } from '../../src/eval/eval-report.js';
import { runEval } from '../../src/eval/run-eval.js';
import { isStrandError } from '../../src/errors.js';
import { createLogger } from '../../src/logger.js';
import { createNlp } from '../../src/text/nlp.js';
import { testConfig } from '../helpers/runtime.js';

const logger = createLogger('silent');

const SMALL = [
  {
    id: 'r1',
    outlet: 'A',
    published: '2026-03-01',
    title: 'Shooting in Norvale',
    sentences: ['Two men were shot in Norvale on Saturday night.', 'Police arrested a suspect.'],
    topic: 'crime',
    subtopic: 'norvale',
  },
  {
    id: 'r2',
    outlet: 'B',
    published: '2026-03-02',
    title: 'Norvale shooting suspect held',
    sentences: ['A suspect was arrested after two men were shot in Norvale on Saturday.'],
    topic: 'crime',
    subtopic: 'norvale',
  },
  {
    id: 'r3',
    outlet: 'C',
    published: '2026-05-20',
    title: 'Warehouse fire in Tessbury',
    sentences: ['A fire destroyed a warehouse in Tessbury on Tuesday.'],
    topic: 'fire',
    subtopic: 'tessbury',
  },
];

function articleLevel(): EvalCorpus {
  const input = checkEvalInput({
    articles: SMALL,
    gold: [
      { article: 'r1', sentence: null, event: 'I1' },
      { article: 'r2', sentence: null, event: 'I1' },
      { article: 'r3', sentence: null, event: 'I2' },
    ],
  });
  return { name: 'incidents', source: 'test', input };
}

describe('evaluating several corpora in one run', () => {
  let report: EvalReport;
  const config = testConfig();
  const thresholds = [0.15, 0.4];
  beforeAll(async () => {
    const demo: EvalCorpus = { name: 'demo', source: 'demo', input: await demoEvalInput(createNlp(), DEMO_DIR, config) };
    report = await runEval([demo, articleLevel()], { config, settings: ['gold', 'predicted'], thresholds, logger });
  });

  it('scores every corpus in both settings with every metric, the linker and five baselines', () => {
    expect(report.corpora.map((c) => c.name)).toEqual(['demo', 'incidents']);
    for (const c of report.corpora) {
      expect(c.settings.map((s) => s.setting)).toEqual(['gold', 'predicted']);
      for (const s of c.settings) {
        expect(s.systems.map((x) => x.name)).toEqual([
          'Strandline linker',
          'baseline: all singletons',
          'baseline: one event per subtopic',
          'baseline: lexical overlap',
          'baseline: online TF-IDF centroid',
          'baseline: batch average-link (all pairs)',
        ]);
        // CoNLL F1 is the mean of MUC, B3 and CEAFe F1 (Pradhan et al. 2014, "Scoring coreference partitions"; common practice).
        for (const x of s.systems)
          expect(x.partition.conllF1).toBeCloseTo((x.partition.muc.f1 + x.partition.b3.f1 + x.partition.ceafe.f1) / 3, 12);
      }
    }
    const demo = report.corpora[0]!;
    expect(demo.settings[0]!.detection).toBeNull();
    expect(demo.settings[1]!.detection!.recall).toBeGreaterThan(0.5);
  });

  it("reports each thresholded system's best threshold and the regret of the configured one", () => {
    for (const c of report.corpora) {
      for (const s of c.settings) {
        for (const x of s.systems.filter((y) => y.best)) {
          const at = (t: number) =>
            x.kind === 'linker'
              ? s.sweep.find((p) => p.threshold === t)?.conllF1
              : s.sweep.find((p) => p.threshold === t)?.baseline.conllF1;
          expect([config.link.threshold, ...thresholds]).toContain(x.best!.conll.threshold);
          expect(x.best!.conll.regret).toBeGreaterThanOrEqual(0);
          expect(x.best!.conll.value - x.best!.conll.regret).toBeCloseTo(x.partition.conllF1, 12);
          for (const t of thresholds)
            if (x.kind === 'linker' || x.name.includes('online')) expect(at(t)!).toBeLessThanOrEqual(x.best!.conll.value + 1e-12);
        }
      }
    }
  });

  it('puts the online baseline beside each threshold of the sweep, matching the table at that threshold', () => {
    const gold = report.corpora[0]!.settings[0]!;
    expect(gold.sweep.map((p) => p.threshold)).toEqual(thresholds);
    const online = gold.systems.find((x) => x.name === 'baseline: online TF-IDF centroid')!;
    const best = gold.sweep.reduce((a, p) => (p.baseline.conllF1 > a ? p.baseline.conllF1 : a), online.partition.conllF1);
    expect(online.best!.conll.value).toBeCloseTo(best, 12);
  });

  it('sums up across corpora: mean scores, the largest regret, the linker against the baseline at its best', () => {
    const gold = report.overall.find((o) => o.setting === 'gold')!;
    expect(gold.corpora).toBe(2);
    const linkers = report.corpora.map((c) => c.settings[0]!.systems[0]!);
    expect(gold.meanConll).toBeCloseTo((linkers[0]!.partition.conllF1 + linkers[1]!.partition.conllF1) / 2, 12);
    expect(gold.maxRegretConll).toBeCloseTo(Math.max(...linkers.map((l) => l.best!.conll.regret)), 12);
    expect(gold.versusBaseline.map((v) => v.corpus)).toEqual(['demo', 'incidents']);
    expect(formatReport(report)).toMatch(/== Across corpora/);
  });

  it('scores the stories as a clustering of articles against the story labels', () => {
    const stories = report.corpora[0]!.settings[0]!.stories!;
    expect(stories.against).toBe('subtopic');
    expect(stories.articles).toBeGreaterThan(50);
    expect(stories.stories).toBeGreaterThan(1);
    expect(stories.partition.conllF1).toBeGreaterThan(0);
    expect(report.corpora[1]!.settings[0]!.stories!.against).toBe('subtopic');
  });

  it('splits pairs by link type, with the subtopics as stories', () => {
    const gold = report.corpora[0]!.settings[0]!;
    const linker = gold.systems[0]!;
    expect(linker.pairwise.crossStory.goldPairs).toBeGreaterThan(0);
    expect(linker.pairwise.sameStory.goldPairs + linker.pairwise.crossStory.goldPairs).toBe(linker.pairwise.crossArticle.goldPairs);
    // The one-event-per-subtopic baseline can never link across stories.
    expect(gold.systems[2]!.pairwise.crossStory.systemPairs).toBe(0);
  });

  it('keeps its own answer for every scored mention, so any scorer can recompute the scores', () => {
    const gold = report.corpora[0]!.settings[0]!;
    expect(gold.answer).toHaveLength(gold.goldMentions);
    expect(gold.answer[0]).toEqual({ article: expect.any(String), sentence: expect.any(Number), events: [expect.stringMatching(/^ev_/)] });
    expect(report.corpora[1]!.settings[0]!.answer.map((a) => [a.article, a.sentence])).toEqual([
      ['r1', null],
      ['r2', null],
      ['r3', null],
    ]);
  });

  it('counts the gold sentences that carry several events, since partition scores see only one', () => {
    const input = report.corpora[0]!.input;
    expect(input.multiEventMentions).toBeGreaterThan(0);
    expect(input.multiEventMentions).toBeLessThan(input.goldMentions);
    expect(formatReport(report)).toMatch(/gold mentions carry several events/);
    expect(report.primaryRule).toMatch(/spanning most articles/);
  });

  it('draws the sweep of every corpus in the HTML report, without scripts', () => {
    const html = htmlReport(report);
    expect(html.match(/<svg[^>]*aria-label="Scores against the link threshold/g)!.length).toBeGreaterThanOrEqual(2);
    expect(html).not.toMatch(/<script/);
  });
});

describe('evaluating scoped gold and gold that quotes the mention inside its sentence', () => {
  it('scores only the sentences in scope', async () => {
    const input = checkEvalInput({
      articles: SMALL,
      gold: [
        { article: 'r1', sentence: 0, event: 'I1' },
        { article: 'r1', sentence: 1, event: 'I1' },
        { article: 'r2', sentence: 0, event: 'I1' },
      ],
      scope: new Set(['r1#0', 'r2#0']),
    });
    const report = await runEval([{ name: 'scoped', source: 'test', input }], {
      config: testConfig(),
      settings: ['gold', 'predicted'],
      thresholds: [0.2],
      logger,
    });
    const [gold, predicted] = report.corpora[0]!.settings;
    expect(gold!.goldMentions).toBe(2);
    expect(gold!.answer.map((a) => `${a.article}#${a.sentence}`).sort()).toEqual(['r1#0', 'r2#0']);
    expect(predicted!.answer.every((a) => ['r1#0', 'r2#0'].includes(`${a.article}#${a.sentence}`))).toBe(true);
  });

  it("takes a gold line whose text is the mention's words rather than the whole sentence", async () => {
    const input = checkEvalInput({
      articles: SMALL,
      gold: [
        { article: 'r1', sentence: 0, event: 'I1', text: 'were shot' },
        { article: 'r2', sentence: 0, event: 'I1', text: 'shot in Norvale' },
      ],
    });
    const report = await runEval([{ name: 'spans', source: 'test', input }], {
      config: testConfig(),
      settings: ['gold'],
      thresholds: [0.2],
      logger,
    });
    expect(report.corpora[0]!.settings[0]!.goldMentions).toBe(2);
  });
});

describe('the eval command', () => {
  let out = '';
  afterEach(() => vi.restoreAllMocks());
  const capture = () => {
    out = '';
    vi.spyOn(process.stdout, 'write').mockImplementation((chunk: string | Uint8Array) => ((out += String(chunk)), true));
    vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
  };

  it('writes the demo as a corpus folder that eval then reads, with another corpus beside it', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strandline-eval-'));
    capture();
    expect(await exportDemoCommand(join(dir, 'demo'), { logLevel: 'silent' })).toBe(0);
    const gold = readFileSync(join(dir, 'demo', 'gold.jsonl'), 'utf8')
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l));
    expect(gold[0]).toMatchObject({
      article: expect.any(String),
      sentence: expect.any(Number),
      text: expect.any(String),
      event: expect.any(String),
    });
    writeFileSync(join(dir, 'demo', 'scope.jsonl'), `${JSON.stringify({ article: gold[0].article, sentence: gold[0].sentence })}\n`);
    const code = await evalCommand({
      corpus: [join(dir, 'demo')],
      articles: join(dir, 'demo', 'articles.jsonl'),
      gold: join(dir, 'demo', 'gold.jsonl'),
      setting: 'gold',
      thresholds: '0.2:0.3:0.1',
      sweep: true,
      out: join(dir, 'out'),
      logLevel: 'silent',
    });
    expect(code).toBe(0);
    expect(out).toMatch(/Gold mentions: 1 gold/);
    expect(out).toMatch(/baseline: batch average-link \(all pairs\)/);
    expect(out).toMatch(/Threshold sweep/);
    const report = JSON.parse(readFileSync(join(dir, 'out', 'report.json'), 'utf8')) as EvalReport;
    expect(report.corpora).toHaveLength(2);
    expect(report.thresholds).toEqual([0.2, 0.3]);
    expect(readFileSync(join(dir, 'out', 'report.html'), 'utf8')).toMatch(/<svg/);
  });

  it('names the missing file of a corpus folder', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strandline-eval-'));
    writeFileSync(join(dir, 'articles.jsonl'), '');
    const err = await evalCommand({ corpus: [dir], setting: 'gold', logLevel: 'silent' }).catch((e: unknown) => e);
    expect(isStrandError(err, 'STRAND_EVAL_INPUT_INVALID')).toBe(true);
    expect((err as Error).message).toMatch(/holds no gold\.jsonl/);
  });

  it.each([
    ['0.5:0.1:0.1', /from <= to/],
    ['0:0.5:0.1', /0 < from/],
    ['0.1:0.5', /from:to:step/],
    ['0.1:0.5:0.0001', /at most 200 steps/],
    ['x', /from:to:step/],
  ])('refuses --thresholds %s', (spec, message) => {
    expect(() => parseThresholds(spec)).toThrow(message);
  });

  it('reads --thresholds as the points it names', () => {
    expect(parseThresholds('0.05:0.5:0.025')).toHaveLength(19);
    expect(parseThresholds('0.1:0.3:0.1')).toEqual([0.1, 0.2, 0.3]);
  });

  it("gives the same report with the sweep and the batch baseline's merges on worker threads as on the main thread", async () => {
    const config = testConfig();
    const demo: EvalCorpus = { name: 'demo', source: 'demo', input: await demoEvalInput(createNlp(), DEMO_DIR, config) };
    const options = { config, settings: ['gold'] as const, thresholds: [0.1, 0.15, 0.2, 0.25, 0.3], sweep: 'refine' as const, logger };
    const here = await runEval([demo], { ...options, settings: [...options.settings] });
    const threaded = await runEval([demo], { ...options, settings: [...options.settings], threads: 1 });
    const answers = (r: EvalReport) =>
      r.corpora.map((c) =>
        c.settings.map((s) => ({ sweep: s.sweep, answer: s.answer, systems: s.systems.map(({ seconds: _, ...x }) => x) })),
      );
    expect(answers(threaded)).toEqual(answers(here));
    expect(here.corpora[0]!.settings[0]!.sweep.length).toBeGreaterThan(1);
  });

  it.each(['many', '-1', '100', '1.5'])('refuses --sweep-threads %s in one line, with exit 2', async (value) => {
    const r = await cli('eval', '--demo', '--sweep-threads', value);
    expect(r.status).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/--sweep-threads must be auto or a whole number from 0 to 64/);
  });

  it('refuses to run without input, naming what is missing, with exit 2', async () => {
    const r = await cli('eval');
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/give corpus folders with --corpus <dir>/);
  });
});
