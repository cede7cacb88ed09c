/**
 * The embed stage, on a group of articles: each article's sentences are learned in turn
 * (a model that learns from the stream sees them in stream order) and the group's mentions
 * are embedded in one batch; each article also gets its whole-text vector for its story.
 */
import { type DetectedArticle, type MentionSelection, detectMentions } from '../detect/detect-mentions.js';
import type { EmbedInput, Embedder } from '../embed/embedder.js';
import { analyseArticle } from '../text/analyse-article.js';
import type { Nlp } from '../text/nlp.js';
import { describeError } from '../errors.js';
import type { Article, DenseVector, Vector } from '../records.js';
import { type StoryArticle } from '../link/story-state.js';
import { type DetectedWork, type EmbeddedArticle, type Flow, type PipelineContext, outcomeOf } from './context.js';

/**
 * The embed stage, on a group of articles: each article's sentences are learned in turn
 * (TF-IDF document frequencies, in stream order) and the group's mentions are embedded
 * in one batch, which is what keeps a transformer model busy.
 */
export async function embedGroup(ctx: PipelineContext, group: readonly Flow<DetectedWork>[]): Promise<Flow<EmbeddedArticle>[]> {
  const { embedder } = ctx;
  const prepared = group.map((f) => {
    if (f.done) return f;
    const a = f.go;
    // A TF-IDF vector uses the frequencies as they stand after its own article.
    ctx.embedder.learn?.(a.sentences.map((s) => ({ text: s.sentence.text, terms: s.terms })));
    // Taken here, not at commit: each article commits exactly its own increments, so a
    // crash never stores a later article's.
    const idf = embedder.takeLearned?.() ?? null;
    const vectors = a.vectors ?? (embedder.vectorNow ? a.mentions.map((m) => embedder.vectorNow!(m.terms)) : null);
    // The whole article, for its story, as the frequencies stand after it (like its sentences).
    const docVector = ctx.embedder.documentVector?.(a.sentences.flatMap((s) => s.terms)) ?? null;
    return { a, idf, vectors, docVector };
  });
  const pending = prepared.filter((p): p is Extract<typeof p, { a: unknown }> => 'a' in p && !p.vectors);
  let batch: Vector[][] = [];
  try {
    batch = await embedTogether(
      ctx.embedder,
      pending.map((p) => p.a.mentions),
    );
  } catch (err) {
    const reason = `embed: ${describeError(err)}`;
    ctx.logger.child({ stage: 'embed' }).error({ articles: group.length, err: reason }, 'embedding failed');
    return prepared.map((p) => ('a' in p ? { done: outcomeOf(p.a.article, 'rejected', reason) } : p));
  }
  let next = 0;
  return prepared.map((p) => {
    if (!('a' in p)) return p;
    const vectors = p.vectors ?? batch[next++]!;
    const { vectors: _carried, ...a } = p.a;
    return {
      go: {
        ...a,
        idf: p.idf,
        embedded: a.mentions.map((m, i) => ({ ...m, vector: vectors[i]! })),
        storyInput: storyInput(a, p.docVector ?? meanVector(vectors)),
      },
    };
  });
}

/** What the story linker reads of an article. */
function storyInput(a: DetectedArticle, vector: Vector | null): StoryArticle | null {
  if (!vector) return null;
  const names = a.sentences.flatMap((s) => [...s.participants, ...s.places]);
  return {
    id: a.article.id,
    title: a.article.title,
    outlet: a.article.outlet,
    published: a.article.published ?? a.article.fetched,
    vector,
    names,
    isCopy: a.article.duplicateOf !== null,
  };
}

/** The normalised mean of dense vectors (a whole article for a model without document vectors), or null. */
function meanVector(vectors: readonly Vector[]): Vector | null {
  const dense = vectors.filter((v): v is DenseVector => v.kind === 'dense');
  if (dense.length === 0) return null;
  const sum = new Float32Array(dense[0]!.values.length);
  for (const v of dense) for (let i = 0; i < sum.length; i++) sum[i]! += v.values[i]!;
  let n = 0;
  for (const x of sum) n += x * x;
  n = Math.sqrt(n) || 1;
  for (let i = 0; i < sum.length; i++) sum[i]! /= n;
  return { kind: 'dense', values: sum };
}

/**
 * Embeds the mentions of several articles in one batch (what keeps a transformer busy) and
 * gives each article its vectors, in order. The pipeline and the scale-out worker share it.
 */
export async function embedTogether(embedder: Embedder, perArticle: readonly (readonly EmbedInput[])[]): Promise<Vector[][]> {
  const all = perArticle.flat();
  const batch = all.length ? await embedder.embed(all) : [];
  let at = 0;
  return perArticle.map((m) => batch.slice(at, (at += m.length)));
}

/** Analysis and mention detection on the calling thread: one article, start to finish. */
export function detectWork(nlp: Nlp, article: Article, threshold: number, select?: MentionSelection): DetectedArticle {
  return detectMentions(analyseArticle(nlp, article), threshold, select);
}
