import { beforeAll, describe, expect, it } from 'vitest';
import { pairwiseLinkScores, type PairKind, type PairScores } from '../../src/eval/pairwise-links.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import type { Runtime } from '../../src/runtime.js';
import { DEMO_DIR, demoGold, demoStories } from '../helpers/demo.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

/**
 * How far the pipeline (predicted mentions, default configuration) agrees with the demo
 * gold. The floors below are regression guards set well under the measured figures, not
 * targets: the linker is not tuned to this invented scenario.
 */
describe('agreement with the demo gold', () => {
  let rt: Runtime;
  let scores: Record<PairKind, PairScores>;
  let detection: { precision: number; recall: number };

  beforeAll(async () => {
    rt = await testRuntime();
    const input = await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest);
    await runArticles(rt, input.articles);
    const gold = new Map<string, Set<string>>();
    for (const g of demoGold()) gold.set(`${g.article}#${g.sentence}`, (gold.get(`${g.article}#${g.sentence}`) ?? new Set()).add(g.event));
    const system = new Map<string, Set<string>>();
    let detected = 0;
    for (const a of input.articles) {
      for (const s of (await rt.store.getArticle(a.id))!.sentences) {
        if (s.isMention) detected++;
        if (s.links.length) system.set(`${a.id}#${s.index}`, new Set(s.links.map((l) => l.eventId)));
      }
    }
    const found = [...gold.keys()].filter((k) => system.has(k)).length;
    detection = { precision: found / detected, recall: found / gold.size };
    const story = new Map(demoStories().map((s) => [s.article, s.story]));
    scores = pairwiseLinkScores(
      gold,
      system,
      (k) => k.slice(0, k.lastIndexOf('#')),
      (a) => story.get(a) ?? null,
    );
    const line = (k: PairKind) =>
      `${k.padEnd(13)} P ${scores[k].precision.toFixed(3)}  R ${scores[k].recall.toFixed(3)}  F1 ${scores[k].f1.toFixed(3)}  (gold pairs ${scores[k].goldPairs}, system pairs ${scores[k].systemPairs})`;
    process.stdout.write(
      `\ndemo agreement, predicted mentions, default configuration\nevent sentences P ${detection.precision.toFixed(3)}  R ${detection.recall.toFixed(3)}\n${(['all', 'withinArticle', 'crossArticle', 'crossStory'] as PairKind[]).map(line).join('\n')}\n`,
    );
  });

  it('finds most event sentences', () => {
    expect(detection.recall).toBeGreaterThan(0.7);
    expect(detection.precision).toBeGreaterThan(0.6);
  });

  it('links sentences of the same event across outlets better than chance', () => {
    // Chance: the share of gold-sentence pairs that are gold links.
    const n = demoGold().length;
    const chance = scores.all.goldPairs / ((n * (n - 1)) / 2);
    expect(scores.all.precision).toBeGreaterThan(5 * chance);
    expect(scores.all.recall).toBeGreaterThan(0.1);
    expect(scores.crossStory.agreedPairs).toBeGreaterThan(0);
  });

  it('counts each event’s mentions and outlets as its links stand, merges of events that shared a sentence included', async () => {
    const { events } = await rt.store.listEvents({ limit: 500, offset: 0, sort: 'mentions' });
    expect((await rt.store.counts()).events).toBe(events.length);
    for (const e of events) {
      // Back-references are linked but do not report the event: not counted.
      const linked = (await rt.store.linkedMentions(e.id)).filter((l) => !l.refersBack);
      expect([e.id, e.mentionCount]).toEqual([e.id, linked.length]);
      expect([e.id, [...e.outlets].sort()]).toEqual([e.id, [...new Set(linked.map((l) => l.mention.outlet))].sort()]);
    }
  });
});
