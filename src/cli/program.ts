/**
 * The `strandline` command line as a function of its arguments, so that it runs the same in
 * its own process (main.ts) and inside a test. Each command's module is imported when that
 * command runs: `--help` and a refused flag answer without loading the pipeline.
 */
import { Command, CommanderError, InvalidArgumentError, Option } from 'commander';
import { describeError, isStrandError } from '../errors.js';
import { version } from './common.js';

function integer(name: string, min: number, max: number) {
  return (value: string): number => {
    if (!/^\d+$/.test(value) || Number(value) < min || Number(value) > max)
      throw new InvalidArgumentError(`${name} must be a whole number from ${min} to ${max}`);
    return Number(value);
  };
}

function share(name: string, max: number) {
  return (value: string): number => {
    const x = Number(value);
    if (!/^\d*\.?\d+$/.test(value) || !(x >= 0 && x <= max)) throw new InvalidArgumentError(`${name} must be a number from 0 to ${max}`);
    return x;
  };
}

function common(cmd: Command): Command {
  return cmd
    .option('-c, --config <file>', 'JSON configuration merged over config/default.json (or set STRANDLINE_CONFIG)')
    .option('--db <file>', 'SQLite store file (default: store.path, or STRANDLINE_DB)')
    .option('--log-level <level>', 'fatal, error, warn, info, debug, trace or silent');
}

/** The command tree; `done` receives the exit code of the command that ran. */
function buildProgram(done: (code: number) => void): Command {
  const program = new Command()
    .name('strandline')
    .description('Links sentences from news feeds to the events they report, across outlets and stories.')
    .version(version())
    .showHelpAfterError();

  common(program.command('serve'))
    .description("serve the query API and the analysts' page; optionally replay feeds into the store while serving")
    .addOption(
      new Option(
        '--role <role>',
        'all: everything in one process; with the Redis store: api, worker (run several) or linker (one per partition) (or STRANDLINE_ROLE)',
      ).choices(['all', 'api', 'worker', 'linker']),
    )
    .option('--demo', 'replay the bundled demo feeds into data/demo.sqlite (unless --db is given)')
    .option('--replay <path...>', 'feed files, folders or URLs to replay while serving')
    .option('--host <host>', 'interface to listen on (or HOST)')
    .option('--port <port>', 'TCP port (or PORT)', integer('--port', 0, 65535))
    .action(async (opts) => done(await (await import('./commands/serve.js')).serveCommand(opts)));

  common(program.command('replay'))
    .description(
      'run an archive (feed files or folders of them; RSS 2.0, Atom, JSON Feed) through the pipeline, oldest article first, with a progress bar, then print a summary: for a backfill or a demo. Exits 1 when a source could not be read',
    )
    .argument('<path...>', 'feed files, folders of feed files, or URLs')
    .option('--pace <ms>', 'wait this long between articles (a live-looking replay)', integer('--pace', 0, 600_000))
    .option('--no-progress', 'no progress bar')
    .option('--json', 'print the summary as JSON')
    .action(async (paths: string[], opts) => done(await (await import('./commands/replay.js')).replayCommand(paths, opts)));

  common(program.command('ingest'))
    .description(
      'fetch live feeds once from their URLs (or files) and run the articles not stored yet through the pipeline, as one poll would: for scripts and scheduled jobs. Exits 1 when a source could not be fetched or read',
    )
    .argument('<source...>', 'feed URLs or files')
    .option('--json', 'print the summary as JSON')
    .action(async (sources: string[], opts) =>
      done(await (await import('./commands/replay.js')).replayCommand(sources, { ...opts, progress: false })),
    );

  common(program.command('forget'))
    .description('erase stored article and sentence text (links and events stay)')
    .option('--article <id>', 'one article: its id as the API and the page show it (URL-encoded or not), or its URL')
    .option('--before <day>', 'every article published before this day (YYYY-MM-DD)')
    .action(async (opts) => done(await (await import('./commands/forget.js')).forgetCommand(opts)));

  const keys = program.command('keys').description('API keys with scopes (read, push, manage, admin); stored as hashes');
  common(keys.command('create'))
    .description('make a key and print it, once')
    .requiredOption('--name <name>', 'what the key is for (shown in lists and refusals)')
    .requiredOption('--scopes <list>', 'comma-separated: read, push, manage, admin')
    .action(async (opts) => done(await (await import('./commands/keys.js')).createKeyCommand(opts)));
  common(keys.command('list'))
    .description('list the keys (ids, scopes, names; never the keys)')
    .action(async (opts) => done(await (await import('./commands/keys.js')).listKeysCommand(opts)));
  common(keys.command('revoke'))
    .description('revoke a key')
    .argument('<id>', 'the key id (key_...)')
    .action(async (id: string, opts) => done(await (await import('./commands/keys.js')).revokeKeyCommand(id, opts)));

  common(program.command('consolidate'))
    .description(
      'merge stored events (and stories) that turn out to be one, and split events that drifted into two happenings (also runs by itself every link.consolidateEvery articles)',
    )
    .action(async (opts) => done(await (await import('./commands/consolidate.js')).consolidateCommand(opts)));

  common(program.command('eval'))
    .description(
      "score linking against annotated corpora: partition metrics, link types, stories, each system's best threshold and the regret of the configured one, baselines side by side; writes report.json and report.html",
    )
    .option('--corpus <dir...>', 'corpus folders, each with articles.jsonl, gold.jsonl and optionally scope.jsonl (several in one run)')
    .option('--articles <file>', 'articles.jsonl: {"id", "outlet", "published", "title", "sentences", "topic", "subtopic"} per line')
    .option('--gold <file>', 'gold.jsonl: {"article", "sentence" (index or null), "event", "text"?} per line')
    .option('--scope <file>', 'scope.jsonl: {"article", "sentence"} lines; only these sentences are scored')
    .option('--demo', 'evaluate on the bundled demo and its gold too (for showing; never for choosing a setting)')
    .addOption(
      new Option('--setting <setting>', 'gold mentions, predicted mentions, or both')
        .choices(['gold', 'predicted', 'both'])
        .default('both'),
    )
    .option(
      '--thresholds <from:to:step>',
      'link thresholds for best thresholds and regret, every one run (default: 0.05:0.5:0.025, every third one run, then the neighbours of the best)',
    )
    .option('--sweep', "print each corpus's scores at every threshold too (always in report.json and report.html)")
    .option(
      '--sweep-threads <n>',
      "threads the sweep's link runs go to, 0 for none (default: auto, one per core up to 4 from 300 articles up)",
      'auto',
    )
    .option('--out <dir>', 'where to write the reports (default eval-results/<time>)')
    .option('--json', 'print the report as JSON')
    .action(async (opts) => done(await (await import('./commands/eval.js')).evalCommand(opts)));

  const review = program
    .command('review')
    .description("reviewers' judgements of links: what they are worth, measured on annotated corpora");
  common(review.command('simulate'))
    .description(
      "simulate reviews on annotated corpora: draw the review queue's sample from the linker's decisions, answer it from gold with reviewer slips, fit the threshold and score it (CoNLL F1 regret), and check the quality estimates' 95 % intervals against the truth",
    )
    .option('--corpus <dir...>', 'corpus folders, as for eval')
    .option('--reviews <n>', 'reviewed decisions the threshold fit gets', integer('--reviews', 10, 100_000), 200)
    .option('--noise <share>', 'share of answers a reviewer gets wrong', share('--noise', 0.5), 0.1)
    .option(
      '--estimate-reviews <n>',
      'reviewed decisions (five reviewers each) the quality estimate gets',
      integer('--estimate-reviews', 10, 100_000),
      300,
    )
    .option('--runs <n>', 'seeded runs', integer('--runs', 1, 1000), 10)
    .option('--json', 'print the rows as JSON')
    .action(async (opts) => done(await (await import('./commands/review.js')).reviewSimulateCommand(opts)));
  common(review.command('draw'))
    .description(
      'draw a review round from the stored linking decisions (by strata, so that the answers estimate precision and recall without bias); reviewers answer it on the page or through /api/reviews',
    )
    .option('--size <n>', 'items to review', integer('--size', 1, 5000), 200)
    .option('--reviewers <n>', 'reviewers each item wants', integer('--reviewers', 1, 15), 5)
    .option('--from <day>', 'only decisions about events active on or after this day')
    .option('--to <day>', 'only decisions about events active on or before this day')
    .option('--seed <n>', 'seed of the draw (to draw the same sample again)', integer('--seed', 0, 2 ** 31 - 1))
    .action(async (opts) => done(await (await import('./commands/review.js')).reviewDrawCommand(opts)));
  common(review.command('report'))
    .description(
      "what a round's answers say: agreement, reviewers' error rates, precision and recall with 95 % intervals, the threshold they suggest",
    )
    .argument('<round>', 'the round id (rv_...)')
    .option('--json', 'print the report as JSON')
    .action(async (id: string, opts) => done(await (await import('./commands/review.js')).reviewReportCommand(id, opts)));
  common(review.command('gold'))
    .description("write a round's answers as a corpus folder (articles.jsonl, gold.jsonl) that strandline eval reads")
    .argument('<round>', 'the round id (rv_...)')
    .argument('<dir>', 'folder to write to')
    .action(async (id: string, dir: string, opts) => done(await (await import('./commands/review.js')).reviewGoldCommand(id, dir, opts)));

  common(program.command('export-demo'))
    .description('write the demo as articles.jsonl and gold.jsonl in the evaluation format')
    .argument('<dir>', 'folder to write to')
    .action(async (dir: string, opts) => done(await (await import('./commands/eval.js')).exportDemoCommand(dir, opts)));
  // Commander reports usage errors by throwing (below) rather than ending the process itself.
  program.exitOverride();
  for (const cmd of program.commands) for (const c of [cmd, ...cmd.commands]) c.exitOverride();
  return program;
}

/**
 * Runs the command line on `args` (without the node and script names); resolves to the exit
 * code: the command's own, 0 after help or the version, 1 for a usage error (commander has
 * printed it), 2 for a failed start (printed here: a Strandline error by code and message).
 */
export async function runCli(args: readonly string[]): Promise<number> {
  let code = 0;
  try {
    await buildProgram((c) => {
      code = c;
    }).parseAsync([...args], { from: 'user' });
    return code;
  } catch (err) {
    if (err instanceof CommanderError) return err.exitCode;
    process.stderr.write(`strandline: ${isStrandError(err) ? describeError(err) : ((err as Error).stack ?? String(err))}\n`);
    return 2;
  }
}
