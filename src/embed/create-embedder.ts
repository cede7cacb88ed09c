/** The one place an embedder is built from the configuration. */
import type { Config } from '../config/schema.js';
import type { Embedder } from './embedder.js';
import { TfidfEmbedder } from './tfidf-embedder.js';
import { TransformerEmbedder } from './transformer-embedder.js';

/** The configured embedder: TF-IDF (offline default) or a local transformer model (loaded from its folder). */
export async function createEmbedder(embed: Readonly<Config['embed']>): Promise<Embedder> {
  if (embed.kind === 'transformer') return TransformerEmbedder.load(embed.modelPath, embed.batchSize, embed.threads);
  return new TfidfEmbedder(embed.hashBits, { bigrams: embed.bigrams, idfPower: embed.idfPower });
}
