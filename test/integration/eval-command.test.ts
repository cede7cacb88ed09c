import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';
import { DEMO_DIR } from '../../src/cli/common.js';
import { demoEvalInput } from '../../src/eval/demo-input.js';
import { formatReport } from '../../src/eval/format-report.js';
import { checkEvalInput } from '../../src/eval/eval-input.js';
import { type EvalReport, defaultSweep, runEval } from '../../src/eval/run-eval.js';
import { createLogger } from '../../src/logger.js';
import { createNlp } from '../../src/text/nlp.js';
import { testConfig } from '../helpers/runtime.js';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const logger = createLogger('silent');

describe('evaluating on the demo', () => {
  let report: EvalReport;
  beforeAll(async () => {
    const config = testConfig();
    report = await runEval(await demoEvalInput(createNlp(), DEMO_DIR, config), { config, settings: ['gold', 'predicted'], sweep: defaultSweep(), source: 'demo', logger });
  });

  it('scores both settings with every metric, the linker and five baselines', () => {
    expect(report.settings.map((s) => s.setting)).toEqual(['gold', 'predicted']);
    for (const s of report.settings) {
      expect(s.systems.map((x) => x.name)).toEqual([
        'Strandline linker', 'baseline: all singletons', 'baseline: one event per subtopic', 'baseline: lexical overlap',
        'baseline: online TF-IDF centroid', 'baseline: batch average-link (all pairs)',
      ]);
      for (const x of s.systems) expect(x.partition.conllF1).toBeCloseTo((x.partition.muc.f1 + x.partition.b3.f1 + x.partition.ceafe.f1) / 3, 12);
    }
    expect(report.settings[0]!.detection).toBeNull();
    expect(report.settings[1]!.detection!.recall).toBeGreaterThan(0.5);
  });

  it('links in the eval exactly as the live pipeline does', () => {
    for (const s of report.settings) expect(s.linkStepMatchesPipeline).toBe(true);
  });

  it('splits pairs by link type, with the demo stories as subtopics', () => {
    const linker = report.settings[0]!.systems[0]!;
    expect(linker.pairwise.crossStory.goldPairs).toBeGreaterThan(0);
    expect(linker.pairwise.sameStory.goldPairs + linker.pairwise.crossStory.goldPairs).toBe(linker.pairwise.crossArticle.goldPairs);
    // The one-event-per-subtopic baseline can never link across stories.
    expect(report.settings[0]!.systems[2]!.pairwise.crossStory.systemPairs).toBe(0);
  });

  it('beats every baseline on CoNLL F1 with gold mentions (an issue bar; the linker is not tuned to the demo)', () => {
    const [linker, ...baselines] = report.settings[0]!.systems;
    for (const b of baselines) expect(linker!.partition.conllF1, b.name).toBeGreaterThan(b.partition.conllF1);
  });

  it('keeps its own answer for every scored sentence, so any scorer can recompute the scores', () => {
    const answer = report.settings[0]!.answer;
    expect(answer).toHaveLength(report.settings[0]!.goldMentions);
    expect(answer[0]).toEqual({ article: expect.any(String), sentence: expect.any(Number), events: [expect.stringMatching(/^ev_/)] });
  });

  it('sweeps the link threshold: recall falls and precision rises as it climbs', () => {
    const pts = report.sweep!.points;
    expect(pts).toHaveLength(19);
    expect(pts[0]!.pairwise.recall).toBeGreaterThan(pts.at(-1)!.pairwise.recall);
    expect(pts[0]!.pairwise.precision).toBeLessThan(pts.at(-1)!.pairwise.precision);
  });

  it('puts the online baseline and extended BCubed beside each sweep point, matching the tables at the configured threshold', () => {
    const at = report.sweep!.points.find((p) => p.threshold === report.configuration.linkThreshold)!;
    const gold = report.settings.find((s) => s.setting === 'gold')!;
    const row = (name: string) => gold.systems.find((x) => x.name === name)!;
    expect(at.baseline.conllF1).toBeCloseTo(row('baseline: online TF-IDF centroid').partition.conllF1, 10);
    expect(at.baseline.extendedB3F1).toBeCloseTo(row('baseline: online TF-IDF centroid').extendedBcubed.f1, 10);
    expect(gold.linkStepMatchesPipeline).toBe(true);
    expect(at.extendedB3F1).toBeCloseTo(row('Strandline linker').extendedBcubed.f1, 10);
  });

  it('counts the gold sentences that carry several events, since partition scores see only the first', () => {
    expect(report.input.multiEventMentions).toBeGreaterThan(0);
    expect(report.input.multiEventMentions).toBeLessThan(report.input.goldMentions);
    expect(formatReport(report)).toMatch(/gold mentions carry several events/);
  });
});

describe('evaluating article-level gold and scoped gold', () => {
  const articles = [
    { id: 'r1', outlet: 'A', published: '2026-03-01', title: 'Shooting in Norvale', sentences: ['Two men were shot in Norvale on Saturday night.', 'Police arrested a suspect.'], topic: null, subtopic: null },
    { id: 'r2', outlet: 'B', published: '2026-03-02', title: 'Norvale shooting suspect held', sentences: ['A suspect was arrested after two men were shot in Norvale on Saturday.'], topic: null, subtopic: null },
    { id: 'r3', outlet: 'C', published: '2026-05-20', title: 'Warehouse fire in Tessbury', sentences: ['A fire destroyed a warehouse in Tessbury on Tuesday.'], topic: null, subtopic: null },
  ];

  it('treats each article as the mention when the gold is per article', async () => {
    const input = checkEvalInput({ articles, gold: [{ article: 'r1', sentence: null, event: 'I1' }, { article: 'r2', sentence: null, event: 'I1' }, { article: 'r3', sentence: null, event: 'I2' }] });
    expect(input.level).toBe('article');
    const report = await runEval(input, { config: testConfig(), settings: ['gold'], sweep: null, source: 'test', logger });
    expect(report.settings[0]!.answer.map((a) => [a.article, a.sentence])).toEqual([['r1', null], ['r2', null], ['r3', null]]);
    expect(report.settings[0]!.linkStepMatchesPipeline).toBe(true);
  });

  it('scores only the sentences in scope', async () => {
    const input = checkEvalInput({
      articles, gold: [{ article: 'r1', sentence: 0, event: 'I1' }, { article: 'r1', sentence: 1, event: 'I1' }, { article: 'r2', sentence: 0, event: 'I1' }],
      scope: new Set(['r1#0', 'r2#0']),
    });
    const report = await runEval(input, { config: testConfig(), settings: ['gold', 'predicted'], sweep: null, source: 'test', logger });
    expect(report.settings[0]!.goldMentions).toBe(2);
    expect(report.settings[0]!.answer.map((a) => `${a.article}#${a.sentence}`).sort()).toEqual(['r1#0', 'r2#0']);
    expect(report.settings[1]!.answer.every((a) => ['r1#0', 'r2#0'].includes(`${a.article}#${a.sentence}`))).toBe(true);
  });
});

describe('the eval command', () => {
  it('writes the demo as evaluation input that eval then reads back', () => {
    const dir = mkdtempSync(join(tmpdir(), 'strandline-eval-'));
    const run = (...args: string[]) => spawnSync(process.execPath, ['--import', 'tsx', join(ROOT, 'src/cli/main.ts'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 120_000 });
    const exported = run('export-demo', dir);
    expect(exported.status).toBe(0);
    const gold = readFileSync(join(dir, 'gold.jsonl'), 'utf8').trim().split('\n').map((l) => JSON.parse(l));
    expect(gold[0]).toMatchObject({ article: expect.any(String), sentence: expect.any(Number), text: expect.any(String), event: expect.any(String) });
    writeFileSync(join(dir, 'scope.jsonl'), `${JSON.stringify({ article: gold[0].article, sentence: gold[0].sentence })}\n`);
    const r = run('eval', '--articles', join(dir, 'articles.jsonl'), '--gold', join(dir, 'gold.jsonl'), '--setting', 'gold', '--sweep', '--out', join(dir, 'out'));
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/Gold mentions: 298 gold/);
    expect(r.stdout).toMatch(/baseline: batch average-link \(all pairs\)/);
    const html = readFileSync(join(dir, 'out', 'report.html'), 'utf8');
    expect(html).toMatch(/<svg[^>]*aria-label="Scores against the link threshold"/);
    expect(html).not.toMatch(/<script/);
    expect(JSON.parse(readFileSync(join(dir, 'out', 'report.json'), 'utf8')).settings[0].answer.length).toBe(298);
  });

  it('refuses to run without input, naming what is missing', () => {
    const r = spawnSync(process.execPath, ['--import', 'tsx', join(ROOT, 'src/cli/main.ts'), 'eval'], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 });
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/give --articles <file> and --gold <file>, or --demo/);
  });
});
