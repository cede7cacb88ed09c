/**
 * Builds the long-lived parts of a Strandline process from the configuration: the store,
 * the NLP model, the embedder and the linker, with the linker and embedder resumed from
 * what the store holds.
 */
import type { Config } from './config/schema.js';
import type { Embedder } from './embed/embedder.js';
import { createEmbedder } from './embed/create-embedder.js';
import { claimVectorSpace, vectorSpaceOf } from './embed/vector-space.js';
import { activeBinds, applyBinds } from './link/corrections.js';
import { deserialiseEvent } from './link/event-state.js';
import { OnlineLinker } from './link/online-linker.js';
import { StoryLinker } from './link/story-linker.js';
import { deserialiseStory } from './link/story-state.js';
import type { Logger } from './logger.js';
import type { PipelineContext } from './pipeline/index.js';
import { openStore } from './store/open-store.js';
import type { Store } from './store/store.js';
import { type AnalysisPool, analysisThreads, startAnalysisPool } from './text/analysis-pool.js';
import { createNlp } from './text/nlp.js';
import { CopyDetector } from './copies/copy-detector.js';

/** Everything a command needs to run the pipeline and serve queries. */
export interface Runtime extends PipelineContext {
  close(): Promise<void>;
}

/**
 * Opens the store and resumes the linker. `store` may be passed in (tests); so may a running
 * analysis pool, which the runtime then uses but does not close (benchmarks reuse one).
 */
export async function createRuntime(
  config: Readonly<Config>,
  logger: Logger,
  store?: Store,
  sharedAnalysis?: AnalysisPool,
): Promise<Runtime> {
  const embedder: Embedder = await createEmbedder(config.embed);
  const s = store ?? (await openStore(config.store, logger));
  const linker = new OnlineLinker(config.link);
  const snapshot = await s.loadLinkerState();
  const events = snapshot.events.map(deserialiseEvent);
  try {
    await claimVectorSpace(
      s,
      await vectorSpaceOf(config.embed),
      config.embed.kind === 'tfidf' ? 'sparse' : 'dense',
      events.length ? (events[0]!.dense ? 'dense' : 'sparse') : null,
    );
  } catch (err) {
    if (!store) await s.close();
    throw err;
  }
  embedder.load?.(snapshot.idf);
  linker.load(events, snapshot.tally);
  const stories = new StoryLinker(config.link);
  stories.load(snapshot.stories.map(deserialiseStory), snapshot.storyMerges);
  applyBinds(linker, stories, await activeBinds(s));
  const copies = new CopyDetector(config.copies);
  await copies.load(s);
  const threads = sharedAnalysis?.threads ?? analysisThreads(config.analysis.threads);
  const owned = !sharedAnalysis && threads > 0 ? await startAnalysisPool(threads) : undefined;
  const analysis = sharedAnalysis ?? owned;
  logger.child({ stage: 'runtime' }).debug({ events: linker.size, idfDocs: snapshot.idf.docs, analysisThreads: threads }, 'linker resumed');
  return {
    config,
    nlp: createNlp(),
    embedder,
    linker,
    stories,
    store: s,
    logger,
    now: () => new Date(),
    copies,
    ...(analysis ? { analysis } : {}),
    close: async () => {
      await owned?.close();
      await s.close();
    },
  };
}
