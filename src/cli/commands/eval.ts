/** `strandline eval` and `strandline export-demo`. */
import { mkdirSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { StrandError, isStrandError } from '../../errors.js';
import { demoEvalInput } from '../../eval/demo-input.js';
import { type EvalCorpus, readCorpus } from '../../eval/corpus.js';
import { readEvalInput } from '../../eval/eval-input.js';
import { formatReport } from '../../eval/format-report.js';
import { htmlReport } from '../../eval/html-report.js';
import type { Setting } from '../../eval/prepare-mentions.js';
import { defaultSweep, runEval } from '../../eval/run-eval.js';
import { sweepThreads } from '../../eval/sweep-pool.js';
import { createNlp } from '../../text/nlp.js';
import { type CommonOptions, DEMO_DIR, setup } from '../common.js';
import { listenForStop } from '../stop-signals.js';

/** Options of eval. */
export interface EvalCommandOptions extends CommonOptions {
  corpus?: string[];
  articles?: string;
  gold?: string;
  scope?: string;
  demo?: boolean;
  setting: 'gold' | 'predicted' | 'both';
  thresholds?: string;
  sweep?: boolean;
  sweepThreads?: string;
  out?: string;
  json?: boolean;
}

/** `from:to:step` (e.g. 0.05:0.5:0.025) as the thresholds it names. */
export function parseThresholds(spec: string): number[] {
  const m = /^(\d*\.?\d+):(\d*\.?\d+):(\d*\.?\d+)$/.exec(spec.trim());
  const [from, to, step] = m ? [Number(m[1]), Number(m[2]), Number(m[3])] : [NaN, NaN, NaN];
  if (!m || !(from > 0) || to > 1 || to < from || !(step > 0) || (to - from) / step > 200) {
    throw new StrandError(
      'STRAND_REQUEST_INVALID',
      `--thresholds must be from:to:step with 0 < from <= to <= 1 and at most 200 steps, such as 0.05:0.5:0.025, not "${spec}"`,
    );
  }
  const out: number[] = [];
  for (let t = from; t <= to + 1e-9; t += step) out.push(Math.round(t * 10000) / 10000);
  return out;
}

/** Below this many articles in all, starting sweep threads costs more than they save. */
const THREADS_FROM_ARTICLES = 300;

/** `auto` or a whole number of threads from 0 to 64. */
export function parseSweepThreads(spec: string): 'auto' | number {
  if (spec === 'auto') return spec;
  const n = /^\d{1,2}$/.test(spec.trim()) ? Number(spec) : NaN;
  if (!(n >= 0 && n <= 64))
    throw new StrandError('STRAND_REQUEST_INVALID', `--sweep-threads must be auto or a whole number from 0 to 64, not "${spec}"`);
  return n;
}

/** Runs an evaluation over every corpus given and writes report.json and report.html; returns the exit code. */
export async function evalCommand(opts: EvalCommandOptions): Promise<number> {
  const corpora: EvalCorpus[] = [];
  const { config, logger } = setup({ logLevel: 'warn', ...opts });
  const threadsWanted = parseSweepThreads(opts.sweepThreads ?? 'auto');
  if (opts.articles || opts.gold) {
    if (!opts.articles || !opts.gold)
      throw new StrandError(
        'STRAND_REQUEST_INVALID',
        'give both --articles <file> and --gold <file> (or a corpus folder with --corpus <dir>)',
      );
    corpora.push({
      name: basename(dirname(resolve(opts.articles))),
      source: resolve(opts.articles),
      input: await readEvalInput({ articles: opts.articles, gold: opts.gold, scope: opts.scope }),
    });
  }
  for (const dir of opts.corpus ?? []) corpora.push(await readCorpus(dir));
  if (opts.demo) corpora.push({ name: 'demo', source: 'the demo (demo-feed/)', input: await demoEvalInput(createNlp(), DEMO_DIR, config) });
  if (corpora.length === 0)
    throw new StrandError(
      'STRAND_REQUEST_INVALID',
      'give corpus folders with --corpus <dir> (repeatable), or --articles <file> and --gold <file>, or --demo',
    );
  const settings: Setting[] = opts.setting === 'both' ? ['gold', 'predicted'] : [opts.setting];
  const thresholds = opts.thresholds ? parseThresholds(opts.thresholds) : defaultSweep();
  // auto: one per core up to 4, but not for small corpora, where starting them costs more than they save.
  const articles = corpora.reduce((n, c) => n + c.input.articles.length, 0);
  const threads = threadsWanted === 'auto' ? (articles < THREADS_FROM_ARTICLES ? 0 : sweepThreads('auto')) : threadsWanted;
  const stop = listenForStop('the evaluation');
  if (!opts.json)
    process.stderr.write(
      `evaluating ${corpora.map((c) => `${c.name} (${c.input.articles.length} articles)`).join(', ')}; ${settings.join(' and ')} mentions…\n`,
    );
  let report: Awaited<ReturnType<typeof runEval>>;
  try {
    report = await runEval(corpora, {
      config,
      settings,
      thresholds,
      sweep: opts.thresholds ? 'every' : 'refine',
      threads,
      logger,
      signal: stop.signal,
    });
  } catch (err) {
    if (!isStrandError(err, 'STRAND_STOPPED')) throw err;
    process.stdout.write(`evaluation stopped by ${stop.received()}: no report written\n`);
    return stop.exitCode(1);
  } finally {
    stop.dispose();
  }
  const out = opts.out ?? join('eval-results', report.created.replace(/[:.]/g, '-'));
  mkdirSync(out, { recursive: true });
  writeFileSync(join(out, 'report.json'), `${JSON.stringify(report, null, 2)}\n`);
  writeFileSync(join(out, 'report.html'), htmlReport(report));
  process.stdout.write(
    opts.json
      ? `${JSON.stringify(report, null, 2)}\n`
      : `${formatReport(report, { sweep: opts.sweep })}\n\nwritten: ${join(out, 'report.json')}, ${join(out, 'report.html')}\n`,
  );
  return 0;
}

/** Writes the demo as articles.jsonl and gold.jsonl in the evaluation format. */
export async function exportDemoCommand(dir: string, opts: CommonOptions): Promise<number> {
  const { config } = setup({ logLevel: 'warn', ...opts });
  const input = await demoEvalInput(createNlp(), DEMO_DIR, config);
  mkdirSync(dir, { recursive: true });
  writeFileSync(join(dir, 'articles.jsonl'), input.articles.map((a) => JSON.stringify(a)).join('\n') + '\n');
  writeFileSync(join(dir, 'gold.jsonl'), input.gold.map((g) => JSON.stringify(g)).join('\n') + '\n');
  process.stdout.write(`wrote ${input.articles.length} articles and ${input.gold.length} gold lines to ${dir}\n`);
  return 0;
}
