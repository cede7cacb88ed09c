/**
 * The link and commit stage, on a group: each article is placed in a story and its mentions
 * in events (plan, then apply, article by article), then the group commits in one
 * transaction; on a failed commit memory is reloaded from the store.
 */
import { describeError } from '../errors.js';
import { canonicalUrl } from '../ingest/canonical-url.js';
import { activeBinds, applyBinds } from '../link/corrections.js';
import { deserialiseEvent, outletRows, serialiseEvent, toRecord } from '../link/event-state.js';
import type { LinkPlan } from '../link/online-linker.js';
import { buildMessages, buildStoryMessages } from '../notify/messages.js';
import type { StoryPlan } from '../link/story-linker.js';
import { deserialiseStory, serialiseStory, storyRecord } from '../link/story-state.js';
import { type ArticleCommit, type CommitResult } from '../store/store.js';
import { type ArticleOutcome, type EmbeddedArticle, type Flow, type PipelineContext, outcomeOf } from './context.js';
import { type ConsolidationOutcome, ConsolidationCadence, applyStoredLabels, consolidate } from '../link/consolidate.js';

/**
 * Links a group of articles, one after another (each sees the links of those before it),
 * and commits them in one transaction: one commit per group instead of per article cut the
 * write cost several-fold (the same index pages are dirtied once). The linker applies each
 * plan at once; if the commit fails, the linker and the embedder are reloaded from the
 * store, so memory never holds what the store does not.
 */
export async function linkGroup(
  ctx: PipelineContext,
  flows: readonly Flow<EmbeddedArticle>[],
  cadence: ConsolidationCadence,
): Promise<ArticleOutcome[]> {
  const log = ctx.logger.child({ stage: 'link' });
  const outcomes: ArticleOutcome[] = new Array(flows.length);
  let pending: {
    index: number;
    a: EmbeddedArticle;
    plan: LinkPlan;
    storyPlan: StoryPlan | null;
    commit: Omit<ArticleCommit, 'events' | 'messages' | 'story'>;
  }[] = [];
  const flush = async (): Promise<void> => {
    if (pending.length === 0) return;
    const batch = pending;
    pending = [];
    // An event several articles of the group touched is written once, in its last state:
    // the group commits as one, so the states in between would be overwritten anyway.
    const lastWriter = new Map<string, number>();
    const lastStoryWriter = new Map<string, number>();
    batch.forEach((p, k) => {
      for (const e of p.plan.events) lastWriter.set(e.id, k);
      if (p.storyPlan) lastStoryWriter.set(p.storyPlan.story.id, k);
    });
    const openedHere = new Set(batch.flatMap((p) => p.plan.opened));
    await applyStoredLabels(
      ctx,
      batch.flatMap((p) => p.plan.events).filter((e) => !openedHere.has(e.id)),
    );
    const commits: ArticleCommit[] = batch.map((p, k) => ({
      ...p.commit,
      events: p.plan.events
        .filter((e) => lastWriter.get(e.id) === k)
        .map((e) => ({ record: toRecord(e), outlets: outletRows(e), state: serialiseEvent(e) })),
      story:
        p.storyPlan && lastStoryWriter.get(p.storyPlan.story.id) === k
          ? { record: storyRecord(p.storyPlan.story), state: serialiseStory(p.storyPlan.story) }
          : null,
      messages: [
        ...buildMessages(p.plan, p.a.embedded, ctx.now()),
        ...(p.storyPlan ? buildStoryMessages(p.storyPlan, p.a.article, ctx.now()) : []),
      ],
    }));
    let results: CommitResult[];
    try {
      results = await ctx.store.commitArticles(commits);
    } catch (err) {
      log.error({ articles: batch.length, err: describeError(err) }, 'commit failed; articles not stored');
      for (const p of batch) outcomes[p.index] = outcomeOf(p.a.article, 'rejected', describeError(err));
      await resync(ctx, cadence);
      return;
    }
    let stale = false;
    batch.forEach((p, k) => {
      if (results[k] === 'already-stored') {
        // Another writer stored it first: our in-memory plan for it must go.
        stale = true;
        outcomes[p.index] = outcomeOf(p.a.article, 'duplicate', 'already stored');
        return;
      }
      outcomes[p.index] = {
        ...outcomeOf(p.a.article, 'stored', null),
        sentences: p.a.sentences.length,
        mentions: p.a.mentions.length,
        links: p.plan.links.length,
        opened: p.plan.opened.length,
        story: p.storyPlan?.story.id ?? null,
        storyOpened: p.storyPlan?.opened ?? false,
        outletsAdded: p.plan.outletsAdded.length,
        assignments: assignments(p.plan.links),
      };
    });
    if (stale) await resync(ctx, cadence);
  };

  /** One pass over the events and stories of the last interval; settled in the store once it completes. */
  const runPass = async (at: number): Promise<ConsolidationOutcome | null> => {
    try {
      const every = ctx.config.link.consolidateEvery;
      const pass = await consolidate(ctx, await ctx.store.recentEventIds(every), await ctx.store.recentStoryIds(every));
      await ctx.store.settleConsolidation(at);
      return pass;
    } catch (err) {
      // The articles are stored; the pass stays owed and is taken up after the reload.
      log.error({ err: describeError(err) }, 'consolidation failed');
      await resync(ctx, cadence);
      return null;
    }
  };
  // Passes an earlier run left owed, reported with the group's first outcome.
  const owedPasses: ConsolidationOutcome[] = [];

  for (let i = 0; i < flows.length; i++) {
    const f = flows[i]!;
    if (f.done) {
      outcomes[i] = f.done;
      continue;
    }
    // A pass owed comes before the next article is linked, as it would have without the failure.
    const owed = await cadence.takeOwed();
    if (owed !== null) {
      log.info({ articles: owed }, 'taking up a consolidation pass left owed');
      const pass = await runPass(owed);
      if (pass) owedPasses.push(pass);
    }
    const a = f.go;
    // The story first: a sentence is judged against its article's story.
    const storyPlan = a.storyInput ? ctx.stories.plan(a.storyInput) : null;
    if (storyPlan) ctx.stories.apply(storyPlan);
    const plan = ctx.linker.plan(a.embedded, storyPlan?.story.id ?? null, (id) => ctx.stories.resolve(id));
    ctx.linker.apply(plan);
    pending.push({
      index: i,
      a,
      plan,
      storyPlan,
      commit: {
        storyId: storyPlan?.story.id ?? null,
        storyInput: a.storyInput ? { vector: a.storyInput.vector, names: a.storyInput.names } : null,
        article: a.article,
        canonicalUrl: canonicalUrl(a.article.url),
        sentences: a.sentences.map((s, k) => ({
          index: s.sentence.index,
          text: s.sentence.text,
          start: s.sentence.start,
          end: s.sentence.end,
          eventness: a.eventness[k]!,
        })),
        mentions: a.embedded,
        links: plan.links,
        sketch: ctx.copies?.sketchOf(a.article.id) ?? null,
        idf: a.idf,
        tally: plan.tally,
      },
    });
    if (await cadence.afterArticle()) {
      // Consolidation reads what is stored: commit what is pending first, the pass owed with it.
      const at = cadence.at;
      pending.at(-1)!.commit.consolidationDue = true;
      await flush();
      if (outcomes[i]?.status !== 'stored') continue;
      const pass = await runPass(at);
      if (pass) outcomes[i] = withPass(outcomes[i]!, pass);
    }
  }
  await flush();
  if (outcomes.length > 0) outcomes[0] = owedPasses.reduce(withPass, outcomes[0]!);
  return outcomes;
}

/** Reloads the linker, the embedder's document frequencies and the copy index from the store. */
export async function reloadLinking(ctx: PipelineContext): Promise<void> {
  const snapshot = await ctx.store.loadLinkerState();
  ctx.linker.reset();
  ctx.linker.load(snapshot.events.map(deserialiseEvent), snapshot.tally);
  ctx.stories.reset();
  ctx.stories.load(snapshot.stories.map(deserialiseStory), snapshot.storyMerges);
  applyBinds(ctx.linker, ctx.stories, await activeBinds(ctx.store));
  ctx.embedder.load?.(snapshot.idf);
  await ctx.copies?.load(ctx.store);
}

/** After a failed or stale commit: memory back to what the store holds. */
async function resync(ctx: PipelineContext, cadence: ConsolidationCadence): Promise<void> {
  await reloadLinking(ctx);
  cadence.reset();
}

function withPass(o: ArticleOutcome, pass: ConsolidationOutcome): ArticleOutcome {
  return {
    ...o,
    merges: [...o.merges, ...pass.merges],
    splits: [...o.splits, ...pass.splits],
    storyMerges: [...o.storyMerges, ...pass.storyMerges],
    storySplits: [...o.storySplits, ...pass.storySplits],
  };
}

function assignments(links: readonly { sentenceIndex: number; eventId: string; rank: number }[]): ArticleOutcome['assignments'] {
  const by = new Map<number, { rank: number; eventId: string }[]>();
  for (const l of links) by.set(l.sentenceIndex, [...(by.get(l.sentenceIndex) ?? []), l]);
  return [...by].map(([sentenceIndex, ls]) => ({ sentenceIndex, eventIds: ls.sort((x, y) => x.rank - y.rank).map((l) => l.eventId) }));
}
