/**
 * The live link stage run on articles analysed beforehand: admission, embedding, story and
 * event linking, commits and consolidation, through a fresh in-memory store held to the
 * Store contract. The evaluation and the benchmark measure exactly the code that runs
 * live; there is no second implementation of linking for them.
 */
import { concatMap, defer, from, lastValueFrom, toArray } from 'rxjs';
import type { Config } from '../config/schema.js';
import { CopyDetector } from '../copies/copy-detector.js';
import { createEmbedder } from '../embed/create-embedder.js';
import type { Embedder } from '../embed/embedder.js';
import { OnlineLinker } from '../link/online-linker.js';
import { StoryLinker } from '../link/story-linker.js';
import type { Logger } from '../logger.js';
import { type ArticleOutcome, type DetectedWork, type PipelineContext, admitWork, linkStages } from '../pipeline/index.js';
import { openSqliteStore } from '../store/sqlite/sqlite-store.js';
import type { Store } from '../store/store.js';
import type { Nlp } from '../text/nlp.js';

/** What one run of the link stage gave. */
export interface LinkRun {
  outcomes: ArticleOutcome[];
  /** Wall time of the link stage (embedding, linking, committing, consolidating), seconds. */
  seconds: number;
}

/**
 * Runs the link stage over `detected` (in order) with `config`, on a fresh in-memory store.
 * `embedder` may be passed for models that are slow to load (the vectors then come with
 * the input; a TF-IDF embedder is always made fresh, since it learns from the stream).
 */
export async function linkDetected(
  config: Readonly<Config>,
  detected: readonly DetectedWork[],
  deps: { nlp: Nlp; logger: Logger; now: () => Date; embedder?: Embedder },
  inspect?: (store: Store, outcomes: readonly ArticleOutcome[]) => Promise<void>,
): Promise<LinkRun> {
  const store = openSqliteStore(':memory:');
  const embedder = deps.embedder?.learn === undefined && deps.embedder ? deps.embedder : await createEmbedder(config.embed);
  const ctx: PipelineContext = {
    config,
    nlp: deps.nlp,
    embedder,
    linker: new OnlineLinker(config.link),
    stories: new StoryLinker(config.link),
    store,
    logger: deps.logger,
    now: deps.now,
    copies: new CopyDetector(config.copies),
  };
  const t0 = performance.now();
  try {
    const admit = admitWork(ctx);
    const outcomes = await lastValueFrom(
      from(detected).pipe(
        concatMap((d) => defer(() => admit(d))),
        linkStages(ctx),
        toArray(),
      ),
    );
    const seconds = (performance.now() - t0) / 1000;
    // What the store holds at the end, read before it goes (the review simulation reads the links' scores).
    await inspect?.(store, outcomes);
    return { outcomes, seconds };
  } finally {
    await store.close();
  }
}
