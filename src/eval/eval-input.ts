/**
 * The evaluation input (our own format, documented in the README):
 *
 *   articles.jsonl  {"id", "outlet", "published" (RFC 3339, YYYY-MM-DD or null), "title",
 *                    "sentences": [string, ...], "topic" (or null), "subtopic" (or null)}
 *   gold.jsonl      {"article", "sentence" (0-based index, or null for an article-level
 *                    label), "event"}, optionally "text" (the sentence, or the mention's words in it; checked)
 *   scope.jsonl     {"article", "sentence"}: only these sentences are scored (optional)
 *
 * Every line is validated; problems are reported with file, line and reason, all at once.
 */
import { readFile, stat } from 'node:fs/promises';
import { StrandError } from '../errors.js';

/** One article of the evaluation input. */
export interface EvalArticle {
  id: string;
  outlet: string;
  published: string | null;
  title: string;
  sentences: string[];
  topic: string | null;
  subtopic: string | null;
}

/** One gold line. */
export interface GoldLine {
  article: string;
  sentence: number | null;
  event: string;
  text?: string;
}

/** A validated evaluation input. */
export interface EvalInput {
  articles: EvalArticle[];
  gold: GoldLine[];
  /** Scored sentence keys (`article#index`), or null to score every gold and system mention. */
  scope: Set<string> | null;
  /** Sentence-level gold, or article-level (every gold line has "sentence": null). */
  level: 'sentence' | 'article';
}

/** Largest input file read, in bytes (a large annotated corpus is tens of MB). */
export const MAX_EVAL_FILE_BYTES = 512 * 1024 * 1024;
const MAX_REPORTED = 20;

type Obj = Record<string, unknown>;

/** Reads and validates the three files. */
export async function readEvalInput(
  files: { articles: string; gold: string; scope?: string | undefined },
  maxBytes = MAX_EVAL_FILE_BYTES,
): Promise<EvalInput> {
  const problems: string[] = [];
  const articles = parseArticles(await readLines(files.articles, maxBytes), files.articles, problems);
  const byId = new Map(articles.map((a) => [a.id, a]));
  const gold = parseGold(await readLines(files.gold, maxBytes), files.gold, byId, problems);
  const scope = files.scope ? parseScope(await readLines(files.scope, maxBytes), files.scope, byId, problems) : null;
  return finish({ articles, gold, scope }, problems);
}

/** Validates an input already in memory (the demo export, tests). */
export function checkEvalInput(input: { articles: EvalArticle[]; gold: GoldLine[]; scope?: Set<string> | null }): EvalInput {
  const problems: string[] = [];
  const byId = new Map<string, EvalArticle>();
  input.articles.forEach((a, i) => {
    if (byId.has(a.id)) problems.push(`articles: item ${i + 1}: duplicate article id ${JSON.stringify(a.id)}`);
    byId.set(a.id, a);
  });
  input.gold.forEach((g, i) => checkGoldRef(g, byId, `gold: item ${i + 1}`, problems));
  return finish({ articles: input.articles, gold: input.gold, scope: input.scope ?? null }, problems);
}

function finish(x: { articles: EvalArticle[]; gold: GoldLine[]; scope: Set<string> | null }, problems: string[]): EvalInput {
  const levels = new Set(x.gold.map((g) => (g.sentence === null ? 'article' : 'sentence')));
  if (levels.size > 1) problems.push('gold: mixes sentence-level lines and article-level lines ("sentence": null); use one or the other');
  if (x.gold.length === 0) problems.push('gold: no gold lines');
  if (problems.length) {
    const shown = problems.slice(0, MAX_REPORTED);
    const more = problems.length > MAX_REPORTED ? `\n  … and ${problems.length - MAX_REPORTED} more` : '';
    throw new StrandError(
      'STRAND_EVAL_INPUT_INVALID',
      `the evaluation input has ${problems.length} problem(s):\n  ${shown.join('\n  ')}${more}`,
    );
  }
  return { ...x, level: levels.has('article') ? 'article' : 'sentence' };
}

async function readLines(path: string, maxBytes: number): Promise<string[]> {
  let size: number;
  try {
    size = (await stat(path)).size;
  } catch (err) {
    throw new StrandError(
      'STRAND_EVAL_INPUT_INVALID',
      `cannot read ${path}: ${(err as NodeJS.ErrnoException).code ?? (err as Error).message}`,
      { cause: err },
    );
  }
  if (size > maxBytes) throw new StrandError('STRAND_EVAL_INPUT_INVALID', `${path} is ${size} bytes, over the ${maxBytes}-byte limit`);
  const text = await readFile(path, 'utf8');
  return text.split(/\r?\n/);
}

function parseLine(line: string, where: string, problems: string[]): Obj | null {
  let v: unknown;
  try {
    v = JSON.parse(line);
  } catch (err) {
    problems.push(`${where}: not valid JSON (${(err as Error).message})`);
    return null;
  }
  if (typeof v !== 'object' || v === null || Array.isArray(v)) {
    problems.push(`${where}: must be a JSON object`);
    return null;
  }
  return v as Obj;
}

const isStr = (v: unknown): v is string => typeof v === 'string';
const isNullableStr = (v: unknown): v is string | null | undefined => v === null || v === undefined || typeof v === 'string';

function parseArticles(lines: string[], file: string, problems: string[]): EvalArticle[] {
  const out: EvalArticle[] = [];
  const seen = new Set<string>();
  lines.forEach((line, i) => {
    if (line.trim() === '') return;
    const where = `${file}:${i + 1}`;
    const o = parseLine(line, where, problems);
    if (!o) return;
    const bad = (msg: string) => problems.push(`${where}: ${msg}`);
    if (!isStr(o.id) || o.id === '') return void bad('"id" must be a non-empty string');
    if (seen.has(o.id)) return void bad(`duplicate article id ${JSON.stringify(o.id)}`);
    if (!Array.isArray(o.sentences) || !o.sentences.every(isStr)) return void bad('"sentences" must be an array of strings');
    if (!isNullableStr(o.outlet) || !isNullableStr(o.title) || !isNullableStr(o.topic) || !isNullableStr(o.subtopic))
      return void bad('"outlet", "title", "topic" and "subtopic" must be strings or null');
    let published: string | null = null;
    if (o.published !== null && o.published !== undefined) {
      if (!isStr(o.published) || Number.isNaN(Date.parse(o.published)))
        return void bad(`"published" must be RFC 3339, YYYY-MM-DD or null, not ${JSON.stringify(o.published)}`);
      // A bare date is taken at noon UTC so no time zone moves it to another day.
      published = /^\d{4}-\d{2}-\d{2}$/.test(o.published) ? `${o.published}T12:00:00.000Z` : new Date(o.published).toISOString();
    }
    seen.add(o.id);
    out.push({
      id: o.id,
      outlet: o.outlet ?? '(unknown outlet)',
      published,
      title: o.title ?? '',
      sentences: o.sentences as string[],
      topic: o.topic ?? null,
      subtopic: o.subtopic ?? null,
    });
  });
  return out;
}

function parseGold(lines: string[], file: string, byId: Map<string, EvalArticle>, problems: string[]): GoldLine[] {
  const out: GoldLine[] = [];
  lines.forEach((line, i) => {
    if (line.trim() === '') return;
    const where = `${file}:${i + 1}`;
    const o = parseLine(line, where, problems);
    if (!o) return;
    if (!isStr(o.article) || !isStr(o.event) || o.event === '')
      return void problems.push(`${where}: "article" and "event" must be non-empty strings`);
    if (!(o.sentence === null || (Number.isInteger(o.sentence) && (o.sentence as number) >= 0)))
      return void problems.push(`${where}: "sentence" must be a 0-based index or null`);
    if (o.text !== undefined && !isStr(o.text)) return void problems.push(`${where}: "text" must be a string when given`);
    const g: GoldLine = {
      article: o.article,
      sentence: o.sentence as number | null,
      event: o.event,
      ...(isStr(o.text) ? { text: o.text } : {}),
    };
    if (checkGoldRef(g, byId, where, problems)) out.push(g);
  });
  return out;
}

function checkGoldRef(g: GoldLine, byId: Map<string, EvalArticle>, where: string, problems: string[]): boolean {
  const a = byId.get(g.article);
  if (!a) {
    problems.push(`${where}: unknown article ${JSON.stringify(g.article)}`);
    return false;
  }
  if (g.sentence !== null && g.sentence >= a.sentences.length) {
    problems.push(`${where}: sentence ${g.sentence} is beyond the ${a.sentences.length} sentences of ${g.article}`);
    return false;
  }
  // `text` is the whole sentence, or the mention's words inside it (WEC-style gold).
  if (g.sentence !== null && g.text !== undefined && !a.sentences[g.sentence]!.includes(g.text.trim())) {
    problems.push(
      `${where}: the text is not found in sentence ${g.sentence} of ${g.article}: gold ${JSON.stringify(g.text.slice(0, 80))}, article ${JSON.stringify(a.sentences[g.sentence]!.slice(0, 80))}`,
    );
    return false;
  }
  return true;
}

function parseScope(lines: string[], file: string, byId: Map<string, EvalArticle>, problems: string[]): Set<string> {
  const out = new Set<string>();
  lines.forEach((line, i) => {
    if (line.trim() === '') return;
    const where = `${file}:${i + 1}`;
    const o = parseLine(line, where, problems);
    if (!o) return;
    if (!isStr(o.article) || !Number.isInteger(o.sentence))
      return void problems.push(`${where}: needs "article" (string) and "sentence" (index)`);
    if (!byId.has(o.article)) return void problems.push(`${where}: unknown article ${JSON.stringify(o.article)}`);
    out.add(`${o.article}#${o.sentence as number}`);
  });
  return out;
}
