/**
 * An evaluation corpus: a folder holding articles.jsonl, gold.jsonl and, optionally,
 * scope.jsonl (eval-input.ts), named after the folder.
 */
import { existsSync } from 'node:fs';
import { basename, join, resolve } from 'node:path';
import { StrandError } from '../errors.js';
import { type EvalInput, readEvalInput } from './eval-input.js';

/** One corpus to evaluate on. */
export interface EvalCorpus {
  /** Short name for tables (the folder's name). */
  name: string;
  /** Where it came from, for the report. */
  source: string;
  input: EvalInput;
}

/** Reads a corpus folder; names the missing file when there is one. */
export async function readCorpus(dir: string): Promise<EvalCorpus> {
  const root = resolve(dir);
  for (const f of ['articles.jsonl', 'gold.jsonl']) {
    if (!existsSync(join(root, f)))
      throw new StrandError(
        'STRAND_EVAL_INPUT_INVALID',
        `${dir} holds no ${f} (a corpus folder holds articles.jsonl, gold.jsonl and optionally scope.jsonl)`,
      );
  }
  const scope = join(root, 'scope.jsonl');
  const input = await readEvalInput({
    articles: join(root, 'articles.jsonl'),
    gold: join(root, 'gold.jsonl'),
    scope: existsSync(scope) ? scope : undefined,
  });
  return { name: basename(root), source: root, input };
}
