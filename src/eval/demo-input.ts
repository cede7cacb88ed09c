/**
 * The demo as evaluation input: its feeds read and split exactly as a replay would, with
 * topics and stories (subtopics) from demo-feed/stories.jsonl and the gold from
 * demo-feed/gold.jsonl (whose "text" fields are checked against the split sentences).
 */
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Config } from '../config/schema.js';
import { readReplayInput } from '../ingest/replay-source.js';
import { splitSentences } from '../text/analyse-article.js';
import type { Nlp } from '../text/nlp.js';
import { type EvalArticle, type EvalInput, type GoldLine, checkEvalInput } from './eval-input.js';

/** Builds the evaluation input from a demo-feed folder (feeds/, stories.jsonl, gold.jsonl). */
export async function demoEvalInput(nlp: Nlp, demoDir: string, config: Readonly<Config>): Promise<EvalInput> {
  const feeds = await readReplayInput([join(demoDir, 'feeds')], config.ingest);
  const stories = new Map(
    (await jsonl<{ article: string; topic: string; story: string }>(join(demoDir, 'stories.jsonl'))).map((s) => [s.article, s]),
  );
  const articles: EvalArticle[] = feeds.articles.map((a) => ({
    id: a.id,
    outlet: a.outlet,
    published: a.published,
    title: a.title,
    sentences: splitSentences(nlp, a.text),
    topic: stories.get(a.id)?.topic ?? null,
    subtopic: stories.get(a.id)?.story ?? null,
  }));
  const gold = await jsonl<GoldLine>(join(demoDir, 'gold.jsonl'));
  return checkEvalInput({ articles, gold });
}

async function jsonl<T>(path: string): Promise<T[]> {
  return (await readFile(path, 'utf8'))
    .split('\n')
    .filter((l) => l.trim() !== '')
    .map((l) => JSON.parse(l) as T);
}
