import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import type { ArticleOutcome } from '../../src/pipeline/index.js';
import type { Article } from '../../src/records.js';
import { analyseArticle } from '../../src/text/analyse-article.js';
import { type AnalysisPool, analysisThreads, startAnalysisPool } from '../../src/text/analysis-pool.js';
import { createNlp } from '../../src/text/nlp.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

describe('analysis threads', () => {
  let articles: Article[];
  let pool: AnalysisPool;

  beforeAll(async () => {
    articles = (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles;
    pool = await startAnalysisPool(1);
  });
  afterAll(() => pool.close());

  it('use one thread per core beyond the main one, at most four, when set to auto', () => {
    expect([1, 2, 3, 8, 64].map((cores) => analysisThreads('auto', cores))).toEqual([0, 1, 2, 4, 4]);
    expect(analysisThreads(3, 2)).toBe(3);
  });

  it('analyse an article exactly as the main thread does', async () => {
    const nlp = createNlp();
    for (const a of articles.slice(0, 5)) expect(await pool.analyse(a)).toEqual(analyseArticle(nlp, a));
  });

  it('give the pipeline the same links, events and order as analysis on the main thread', async () => {
    const summary = (o: ArticleOutcome[]) => o.map((x) => [x.articleId, x.status, x.mentions, x.assignments]);
    const onMain = await testRuntime();
    const threaded = await testRuntime({ analysis: { threads: 2 } });
    try {
      expect(threaded.analysis?.threads).toBe(2);
      const a = await runArticles(onMain, articles);
      const b = await runArticles(threaded, articles);
      expect(summary(b)).toEqual(summary(a));
      expect(await threaded.store.counts()).toEqual(await onMain.store.counts());
    } finally {
      await onMain.close();
      await threaded.close();
    }
  });

  it('reject an article the thread cannot analyse, with its id, and go on with the next', async () => {
    const broken = { ...articles[0]!, id: 'broken-1', text: 42 } as unknown as Article;
    await expect(pool.analyse(broken)).rejects.toMatchObject({
      code: 'STRAND_ANALYSIS_FAILED',
      message: expect.stringContaining('broken-1'),
    });
    expect((await pool.analyse(articles[1]!)).sentences.length).toBeGreaterThan(0);
    const rt = await testRuntime({ analysis: { threads: 1 } });
    try {
      const out = await runArticles(rt, [broken, articles[1]!]);
      expect(out.map((o) => o.status)).toEqual(['rejected', 'stored']);
      expect(out[0]!.reason).toMatch(/^analyse: .*broken-1/);
    } finally {
      await rt.close();
    }
  });
});
