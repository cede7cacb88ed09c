/**
 * A review round's answers as an annotated corpus that `strandline eval` reads: the
 * articles involved (their stored sentences), and gold lines from the combined answers.
 * An item answered "same event" puts its sentence in the event, with the event's first
 * sentence standing for the event (the sentence it is named after); one answered
 * "different" puts its sentence in an event of its own, unless another item places it. The
 * gold is partial: only these sentences are mentions, so eval scores how the linker groups
 * them against the reviewers. Items whose text retention erased are left out and counted.
 */
import type { EvalArticle, GoldLine } from '../eval/eval-input.js';
import type { EventQueries, ReviewAnswer, ReviewRound } from '../store/store.js';
import { roundVerdicts } from './rounds.js';

export interface ReviewGold {
  articles: EvalArticle[];
  gold: GoldLine[];
  /** Items left out: no combined answer yet, or text no longer stored. */
  skipped: { unanswered: number; erased: number };
}

export async function reviewGold(store: EventQueries, round: ReviewRound, answers: readonly ReviewAnswer[]): Promise<ReviewGold> {
  const verdicts = roundVerdicts(answers);
  const lines = new Map<string, GoldLine>();
  const articles = new Map<string, EvalArticle | null>();
  const skipped = { unanswered: 0, erased: 0 };
  const article = async (id: string): Promise<EvalArticle | null> => {
    if (!articles.has(id)) {
      const d = await store.getArticle(id);
      const erased = !d || d.sentences.some((s) => !s.text);
      articles.set(
        id,
        erased
          ? null
          : {
              id,
              outlet: d.article.outlet,
              published: d.article.published,
              title: d.article.title,
              sentences: [...d.sentences].sort((a, b) => a.index - b.index).map((s) => s.text),
              topic: null,
              subtopic: null,
            },
      );
    }
    return articles.get(id)!;
  };
  const add = (a: string, sentence: number, event: string) => lines.set(`${a}#${sentence}\n${event}`, { article: a, sentence, event });
  for (const item of round.items) {
    const same = verdicts.get(item.item);
    if (same === undefined) {
      skipped.unanswered++;
      continue;
    }
    if (!(await article(item.articleId))) {
      skipped.erased++;
      continue;
    }
    if (!same) {
      add(item.articleId, item.sentenceIndex, `alone:${item.articleId}#${item.sentenceIndex}`);
      continue;
    }
    // The event's first sentence stands for it.
    const event = await store.getEvent(item.eventId);
    const anchor = event?.mentions.find((m) => !(m.articleId === item.articleId && m.sentenceIndex === item.sentenceIndex));
    if (!anchor || !(await article(anchor.articleId))) {
      skipped.erased++;
      continue;
    }
    add(item.articleId, item.sentenceIndex, item.eventId);
    add(anchor.articleId, anchor.sentenceIndex, item.eventId);
  }
  // A sentence another item placed in an event is not also alone.
  const placed = new Set([...lines.values()].filter((l) => !l.event.startsWith('alone:')).map((l) => `${l.article}#${l.sentence}`));
  const gold = [...lines.values()].filter((l) => !l.event.startsWith('alone:') || !placed.has(`${l.article}#${l.sentence}`));
  const used = new Set(gold.map((l) => l.article));
  return { articles: [...articles.values()].filter((a): a is EvalArticle => a !== null && used.has(a.id)), gold, skipped };
}
