/**
 * Link-step cost as history grows: the synthetic stream's mentions are fed to the online
 * linker (plan + apply, as the link stage runs it), and the time of each mention is
 * recorded in windows after 10k, 100k and 1M stored mentions. To reach a million
 * mentions in minutes, the sentences skip wink-nlp: terms come from a plain tokenizer
 * and names from capitalised words, which is enough to exercise the linker's index,
 * scoring and state at scale (the full text stage is measured by the pipeline rows).
 */
import type { Config } from '../config/schema.js';
import { TfidfEmbedder } from '../embed/tfidf-embedder.js';
import { OnlineLinker } from '../link/online-linker.js';
import type { EmbeddedMention } from '../records.js';
import { syntheticStream } from './synthetic-stream.js';

/** Per-mention link time around one history size. */
export interface ScaleRow {
  storedMentions: number;
  events: number;
  medianMs: number;
  p99Ms: number;
  rssMiB: number;
  heapMiB: number;
}

const STOP = new Set(
  'a an the of in on at to and or for with by from was were is are be been has have had it its this that said says after before when as into their his her they he she who which than then there also'.split(
    ' ',
  ),
);
const WINDOW = 5000;

/** Runs the stream to the largest checkpoint and measures a window of mentions after each. */
export function linkScale(config: Readonly<Config>, checkpoints: readonly number[]): ScaleRow[] {
  const total = Math.max(...checkpoints) + WINDOW;
  const stream = syntheticStream(total, 7);
  // A live stream does not keep what it has delivered: drop the gold, and each article
  // once linked, so the heap holds the linker's state rather than the generated text.
  stream.gold.length = 0;
  const embedder = new TfidfEmbedder(config.embed.hashBits);
  const linker = new OnlineLinker(config.link);
  const rows: ScaleRow[] = [];
  const times: number[] = [];
  let stored = 0;
  let next = 0;
  for (let k = 0; k < stream.articles.length; k++) {
    const a = stream.articles[k]!;
    (stream.articles as (typeof a | undefined)[])[k] = undefined;
    const terms = a.sentences.map(termsOf);
    embedder.learn(terms.map((t) => ({ text: '', terms: t })));
    const mentions: EmbeddedMention[] = a.sentences.map((text, i) => ({
      articleId: a.id,
      sentenceIndex: i,
      text,
      outlet: a.outlet,
      published: a.published!,
      eventness: 1,
      participants: namesOf(text),
      places: [],
      times: [],
      terms: terms[i]!,
      isCopy: false,
      vector: embedder.vector(terms[i]!),
    }));
    const measuring = next < checkpoints.length && stored >= checkpoints[next]!;
    const t0 = performance.now();
    linker.apply(linker.plan(mentions));
    const dt = performance.now() - t0;
    if (measuring) {
      for (let i = 0; i < mentions.length; i++) times.push(dt / mentions.length);
      if (times.length >= WINDOW) {
        const sorted = times.splice(0).sort((x, y) => x - y);
        const mem = process.memoryUsage();
        rows.push({
          storedMentions: checkpoints[next]!,
          events: linker.size,
          medianMs: sorted[Math.floor(sorted.length / 2)]!,
          p99Ms: sorted[Math.floor(sorted.length * 0.99)]!,
          rssMiB: mem.rss / 2 ** 20,
          heapMiB: mem.heapUsed / 2 ** 20,
        });
        next++;
      }
    }
    stored += mentions.length;
    if (next >= checkpoints.length) break;
  }
  return rows;
}

function termsOf(s: string): string[] {
  return s
    .toLowerCase()
    .split(/[^a-z0-9]+/)
    .filter((w) => w.length > 1 && !STOP.has(w));
}

function namesOf(s: string): string[] {
  return [...s.matchAll(/\b[A-Z][a-z]+(?: [A-Z][a-z]+)+/g)].map((m) => m[0]);
}
