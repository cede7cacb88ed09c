/**
 * The vector space a store's vectors live in. Event centroids and mention vectors are only
 * comparable with vectors of the same embedder and settings: a TF-IDF store read with a
 * transformer model would score every mention 0 against every event (and two models of
 * different widths would compare garbage), silently opening a new event per mention. The
 * store records the space its vectors were made in; a process configured for another
 * refuses to start.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { join } from 'node:path';
import type { Config } from '../config/schema.js';
import { StrandError } from '../errors.js';
import type { Store } from '../store/store.js';

/** A description of the configured embedder's vector space, stable across restarts. */
export async function vectorSpaceOf(embed: Readonly<Config['embed']>): Promise<string> {
  if (embed.kind === 'tfidf') {
    // Stores made before these settings existed recorded the first form (bigrams, idf^1).
    const grams = embed.bigrams ? 'unigrams and bigrams' : 'unigrams';
    return `tfidf: hashed ${grams}, 2^${embed.hashBits} features${embed.idfPower === 1 ? '' : `, idf^${embed.idfPower}`}`;
  }
  // The model's weights and vocabulary, not its folder name: a folder is easily reused for another model.
  const hash = createHash('sha256');
  for (const file of [join('onnx', 'model.onnx'), 'tokenizer.json']) {
    for await (const chunk of createReadStream(join(embed.modelPath, file))) hash.update(chunk as Buffer);
  }
  return `transformer: model sha256 ${hash.digest('hex').slice(0, 16)}`;
}

/**
 * Records `space` as the store's vector space, or checks it against the one recorded.
 * `storedKind` is the kind of vector the store's events already hold (null: none), for
 * stores written before the space was recorded.
 */
export async function claimVectorSpace(
  store: Pick<Store, 'claimVectorSpace'>,
  space: string,
  kind: 'sparse' | 'dense',
  storedKind: 'sparse' | 'dense' | null,
): Promise<void> {
  const refuse = (was: string): never => {
    throw new StrandError(
      'STRAND_VECTOR_SPACE_CHANGED',
      `the store's vectors were made by another embedder (${was}) than the one configured (${space}); vectors of the two cannot be compared. Keep the embed settings the store was made with (a store from before embed.bigrams and embed.idfPower: set them to true and 1), or start a new store (store.path, or store.redis.partition)`,
    );
  };
  if (storedKind !== null && storedKind !== kind) refuse(storedKind === 'sparse' ? 'tfidf' : 'a transformer model');
  const recorded = await store.claimVectorSpace(space);
  if (recorded !== space) refuse(recorded);
}
