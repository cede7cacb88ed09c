import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { readCorpus } from '../../src/eval/corpus.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { cli } from '../helpers/cli-in-process.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

describe('review rounds from the command line', () => {
  let db: string;
  beforeAll(async () => {
    db = join(mkdtempSync(join(tmpdir(), 'strandline-review-cli-')), 'store.sqlite');
    const rt = await testRuntime({}, db);
    await runArticles(rt, (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles);
    await rt.close();
  });

  it('draws a round into the store and reports what its answers say', async () => {
    const drawn = await cli('review', 'draw', '--db', db, '--size', '12', '--reviewers', '2', '--seed', '3', '--log-level', 'silent');
    expect(drawn.status).toBe(0);
    const id = /review round (rv_[0-9a-f]{12}): 12 item\(s\), 2 reviewer\(s\) each/.exec(drawn.stdout)![1]!;
    expect(drawn.stdout).toMatch(/near-bar +\d+ of \d+/);
    const store = openSqliteStore(db);
    const round = (await store.getReviewRound(id))!;
    for (const item of round.items)
      for (const reviewer of ['ana', 'ben'])
        await store.putReviewAnswer({
          round: id,
          item: item.item,
          reviewer,
          verdict: item.linked ? 'same' : 'different',
          at: '2026-10-20T00:00:00.000Z',
        });
    await store.close();
    const report = await cli('review', 'report', id, '--db', db, '--log-level', 'silent');
    expect(report.status).toBe(0);
    expect(report.stdout).toMatch(/12 of 12 item\(s\) answered, 12 complete, 24 answer\(s\)/);
    expect(report.stdout).toMatch(/agreement \(Krippendorff's alpha, nominal\): 1\.000/);
    expect(report.stdout).toMatch(/^ {2}ana +12 answers/m);
    const json = JSON.parse((await cli('review', 'report', id, '--db', db, '--json', '--log-level', 'silent')).stdout);
    expect(json).toMatchObject({ items: 12, answers: 24 });

    // The answers as a corpus that eval reads: "same" puts a sentence with its event's first sentence.
    const corpus = join(mkdtempSync(join(tmpdir(), 'strandline-review-gold-')), 'reviewed');
    const gold = await cli('review', 'gold', id, corpus, '--db', db, '--log-level', 'silent');
    expect(gold.status).toBe(0);
    expect(gold.stdout).toMatch(/wrote \d+ article\(s\) and \d+ gold line\(s\) to .*; left out 0 unanswered item\(s\)/);
    const read = await readCorpus(corpus);
    const linked = round.items.filter((i) => i.linked);
    for (const i of linked) expect(read.input.gold).toContainEqual({ article: i.articleId, sentence: i.sentenceIndex, event: i.eventId });
    const scored = await cli(
      'eval',
      '--corpus',
      corpus,
      '--setting',
      'gold',
      '--thresholds',
      '0.2:0.2:0.05',
      '--out',
      join(corpus, '..', 'out'),
      '--log-level',
      'silent',
    );
    expect(scored.status).toBe(0);
    expect(scored.stdout).toMatch(/reviewed/);
  });

  it('refuses malformed arguments and unknown rounds with one clear line', async () => {
    const cases: [string[], RegExp][] = [
      [['review', 'draw', '--size', '0'], /--size must be a whole number from 1 to 5000/],
      [['review', 'draw', '--reviewers', '99'], /--reviewers must be a whole number from 1 to 15/],
      [['review', 'draw', '--db', db, '--from', 'yesterday'], /--from takes a day/],
      [['review', 'draw', '--db', db, '--from', '2099-01-01'], /no linking decisions to review/],
      [['review', 'report', '../../etc/passwd', '--db', db], /a review round id is rv_ and 12 hex digits/],
      [['review', 'report', 'rv_000000000000', '--db', db], /no review round rv_000000000000/],
      [['review', 'gold', 'rv_000000000000', join(tmpdir(), 'x'), '--db', db], /no review round rv_000000000000/],
      [['review', 'gold', 'x/../y', join(tmpdir(), 'x'), '--db', db], /a review round id is rv_/],
    ];
    for (const [args, message] of cases) {
      const r = await cli(...args, '--log-level', 'silent');
      expect(r.status, args.join(' ')).not.toBe(0);
      expect(r.stderr, args.join(' ')).toMatch(message);
      expect(r.stderr).not.toMatch(/\n\s+at /);
    }
  });
});
