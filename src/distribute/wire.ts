/**
 * The records that travel through the Redis streams, as JSON: articles into the intake
 * stream, detected articles (with dense vectors when a worker embedded them) out of it.
 * Typed arrays become plain arrays on the way and typed arrays again on arrival.
 */
import { z } from 'zod';
import { StrandError } from '../errors.js';
import type { DetectedWork } from '../pipeline/index.js';
import type { Article, Vector } from '../records.js';

const MAX_ARTICLE_JSON = 2 * 1024 * 1024;

const articleSchema = z.strictObject({
  id: z.string().min(1).max(2048),
  outlet: z.string().min(1).max(512),
  url: z.string().max(4096).nullable(),
  title: z.string().max(4096),
  published: z.string().max(64).nullable(),
  fetched: z.string().min(1).max(64),
  language: z.string().max(64).nullable(),
  text: z.string(),
  contentHash: z.string().min(1).max(128),
  duplicateOf: z.string().max(2048).nullable(),
  copySimilarity: z.number().min(0).max(1).nullish(),
  source: z.string().max(4096),
  presplit: z.array(z.string()).optional(),
});

/** An article as an intake entry's body. */
export function encodeArticle(a: Article): string {
  return JSON.stringify(a);
}

/** Reads an intake entry's body; refuses anything that is not an article (STRAND_ARTICLE_INVALID). */
export function decodeArticle(body: string): Article {
  if (body.length > MAX_ARTICLE_JSON)
    throw new StrandError('STRAND_ARTICLE_TOO_LARGE', `queued article is ${body.length} bytes, over ${MAX_ARTICLE_JSON}`);
  let raw: unknown;
  try {
    raw = JSON.parse(body);
  } catch (err) {
    throw new StrandError('STRAND_ARTICLE_INVALID', `queued article is not JSON: ${(err as Error).message}`, { cause: err });
  }
  const r = articleSchema.safeParse(raw);
  if (!r.success)
    throw new StrandError(
      'STRAND_ARTICLE_INVALID',
      `queued article is malformed: ${r.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`,
      { cause: r.error },
    );
  const { presplit, ...rest } = r.data;
  return presplit ? { ...rest, presplit } : rest;
}

type WireVector = { kind: 'dense'; values: number[] } | { kind: 'sparse'; indices: number[]; values: number[] };

/** A detected article as an analysed entry's body. */
export function encodeWork(w: DetectedWork): string {
  const vectors = w.vectors?.map((v): WireVector =>
    v.kind === 'dense' ? { kind: 'dense', values: [...v.values] } : { kind: 'sparse', indices: [...v.indices], values: [...v.values] },
  );
  return JSON.stringify({ ...w, vectors });
}

/** Reads an analysed entry's body (written by our own workers, so only its shape is checked). */
export function decodeWork(body: string): DetectedWork {
  const w = JSON.parse(body) as Omit<DetectedWork, 'vectors'> & { vectors?: WireVector[] };
  if (!w || typeof w !== 'object' || !w.article || !Array.isArray(w.mentions))
    throw new StrandError('STRAND_ARTICLE_INVALID', 'analysed entry is malformed');
  const { vectors, ...rest } = w;
  if (!vectors) return rest;
  return {
    ...rest,
    vectors: vectors.map((v): Vector =>
      v.kind === 'dense'
        ? { kind: 'dense', values: Float32Array.from(v.values) }
        : { kind: 'sparse', indices: Uint32Array.from(v.indices), values: Float32Array.from(v.values) },
    ),
  };
}
