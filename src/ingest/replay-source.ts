/**
 * Reads every feed document under the given paths and orders their articles by
 * publication time (undated ones last, in file order), so that a replay shows the linker
 * the stream in the order the world saw it.
 */
import type { Article } from '../records.js';
import { type IngestProblem, type ReadLimits, listFeedFiles, readFeedDocument } from './read-source.js';
import { describeError } from '../errors.js';

/** Everything read for a replay. */
export interface ReplayInput {
  files: string[];
  articles: Article[];
  problems: IngestProblem[];
}

/**
 * Reads and orders the articles of files, folders and URLs. `files` lists the documents
 * read (one refused or unreadable as a whole is a problem, not a file read). When `signal`
 * aborts, reading stops and what was read so far is returned.
 */
export async function readReplayInput(paths: readonly string[], limits: ReadLimits, signal?: AbortSignal): Promise<ReplayInput> {
  const input: ReplayInput = { files: [], articles: [], problems: [] };
  for (const path of paths) {
    if (signal?.aborted) break;
    let files: string[];
    try {
      files = /^https?:\/\//i.test(path) ? [path] : await listFeedFiles(path);
    } catch (err) {
      input.problems.push({
        source: path,
        item: null,
        code: (err as { code?: string }).code ?? 'STRAND_SOURCE_UNREADABLE',
        message: describeError(err).replace(/^STRAND_[A-Z_]+: /, ''),
        severity: 'error',
      });
      continue;
    }
    for (const file of files) {
      if (signal?.aborted) break;
      const doc = await readFeedDocument(file, limits, undefined, signal);
      if (!doc.problems.some((p) => p.item === null && p.severity === 'error')) input.files.push(file);
      input.articles.push(...doc.articles);
      input.problems.push(...doc.problems);
    }
  }
  input.articles = input.articles
    .map((a, i) => ({ a, i }))
    .sort((x, y) => (x.a.published ?? '\uffff').localeCompare(y.a.published ?? '\uffff') || x.i - y.i)
    .map((x) => x.a);
  return input;
}
