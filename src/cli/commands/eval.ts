/** `strandline eval` and `strandline export-demo`. */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { StrandError, isStrandError } from '../../errors.js';
import { demoEvalInput } from '../../eval/demo-input.js';
import { readEvalInput } from '../../eval/eval-input.js';
import { formatReport } from '../../eval/format-report.js';
import { htmlReport } from '../../eval/html-report.js';
import type { Setting } from '../../eval/prepare-mentions.js';
import { defaultSweep, runEval } from '../../eval/run-eval.js';
import { createNlp } from '../../text/nlp.js';
import { type CommonOptions, DEMO_DIR, setup } from '../common.js';
import { listenForStop } from '../stop-signals.js';

/** Options of eval. */
export interface EvalCommandOptions extends CommonOptions {
  articles?: string;
  gold?: string;
  scope?: string;
  demo?: boolean;
  setting: 'gold' | 'predicted' | 'both';
  sweep?: boolean;
  out?: string;
  json?: boolean;
}

/** Runs an evaluation and writes report.json and report.html; returns the exit code. */
export async function evalCommand(opts: EvalCommandOptions): Promise<number> {
  if (!opts.demo && (!opts.articles || !opts.gold)) throw new StrandError('STRAND_REQUEST_INVALID', 'give --articles <file> and --gold <file>, or --demo');
  const { config, logger } = setup({ logLevel: 'warn', ...opts });
  const input = opts.demo ? await demoEvalInput(createNlp(), DEMO_DIR, config) : await readEvalInput({ articles: opts.articles!, gold: opts.gold!, scope: opts.scope });
  const settings: Setting[] = opts.setting === 'both' ? ['gold', 'predicted'] : [opts.setting];
  const stop = listenForStop('the evaluation');
  if (!opts.json) process.stderr.write(`evaluating ${input.articles.length} article(s) (${settings.join(', ')} mentions)…\n`);
  let report: Awaited<ReturnType<typeof runEval>>;
  try {
    report = await runEval(input, { config, settings, sweep: opts.sweep ? defaultSweep() : null, source: opts.demo ? 'the demo (demo-feed/)' : resolve(opts.articles!), logger, signal: stop.signal });
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
  process.stdout.write(opts.json ? `${JSON.stringify(report, null, 2)}\n` : `${formatReport(report)}\n\nwritten: ${join(out, 'report.json')}, ${join(out, 'report.html')}\n`);
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
