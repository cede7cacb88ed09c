import { existsSync } from 'node:fs';
import type { FastifyInstance } from 'fastify';
import { type Browser, chromium } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { createLogger } from '../../src/logger.js';
import type { Runtime } from '../../src/runtime.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { demoApi, runArticles, testConfig } from '../helpers/runtime.js';

// Debian's chromium, driven headless; .ci/run installs it. Never a downloaded browser.
const CHROMIUM = '/usr/bin/chromium';

describe.skipIf(!existsSync(CHROMIUM) && process.env.CI !== 'true')("the analysts' page in a browser", () => {
  let rt: Runtime;
  let app: FastifyInstance;
  let browser: Browser;
  let base: string;

  beforeAll(async () => {
    ({ rt, app } = await demoApi());
    base = await app.listen({ host: '127.0.0.1', port: 0 });
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking'],
    });
  });
  afterAll(async () => {
    await browser?.close();
    await app?.close();
    await rt?.close();
  });

  it('lists events, opens one with its outlets, scores and evidence, then an article with its links', async () => {
    const page = await browser.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(`${base}/`);
    await expect.poll(() => page.locator('#events li').count()).toBeGreaterThan(10);
    await expect.poll(() => page.locator('#status').textContent()).toMatch(/101 articles/);
    expect(await page.locator('.caution').textContent()).toMatch(/machine suggestions/);

    await page.selectOption('#sort', 'outlets');
    await expect.poll(() => page.locator('#events li .meta').first().textContent()).toMatch(/ 6 outlets/);
    await page.locator('#events li').first().click();
    await page.locator('#detail .outlet').first().waitFor();
    expect(await page.locator('#detail .outlet').count()).toBeGreaterThanOrEqual(3);
    expect(await page.locator('#detail .evidence').first().textContent()).toMatch(/score \d\.\d\d/);

    await page.locator('#detail .mention a').first().click();
    await page.locator('#detail .sentence').first().waitFor();
    expect(await page.locator('#detail .sentence.is-mention').count()).toBeGreaterThan(0);
    expect(await page.locator('#detail .sentence .evidence a').count()).toBeGreaterThan(0);

    await page.fill('#q', 'Orlin');
    await expect.poll(async () => (await page.locator('#count').textContent()) ?? '').toMatch(/^\d+ events?$/);
    expect(errors).toEqual([]);
  });

  it('shows a cue for events that open or change while it is open, and reads them in only when asked', async () => {
    const page = await browser.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(`${base}/`);
    await expect.poll(() => page.locator('#events li').count()).toBeGreaterThan(10);
    expect(await page.locator('#fresh').isVisible()).toBe(false);
    const before = await page.locator('#count').textContent();
    // An article arrives while the page is open: it reports a known event and opens new ones.
    const [first] = (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles;
    await runArticles(rt, [
      {
        ...first!,
        id: 'https://late-wire.example/news/1',
        outlet: 'Late Wire',
        url: 'https://late-wire.example/news/1',
        contentHash: 'late-1',
      },
    ]);
    await expect.poll(() => page.locator('#fresh').textContent(), { timeout: 10_000 }).toMatch(/^\d+ events? new or changed/);
    // The list stays as it was until asked.
    expect(await page.locator('#count').textContent()).toBe(before);
    await page.click('#fresh');
    await expect.poll(() => page.locator('#fresh').isVisible()).toBe(false);
    expect(errors).toEqual([]);
  });

  it('asks for an API key when the server protects reads, and shows the events once given one', async () => {
    const token = 'k7Qz2mVw9XcB4nRt8LpY3sHd6FgJ1aEu';
    const guarded = await buildApp({
      store: rt.store,
      logger: createLogger('silent'),
      version: 'test',
      ingestStatus: () => ({ state: 'finished', processed: 101, total: 101, stored: 101, rejected: 0 }),
      auth: { tokens: [token], protect: 'everything' },
    });
    const url = await guarded.listen({ host: '127.0.0.1', port: 0 });
    const page = await browser.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    try {
      await page.goto(`${url}/`);
      await page.locator('#token-form').waitFor();
      expect(await page.locator('#events li').count()).toBe(0);
      await expect.poll(() => page.locator('#count').textContent()).toMatch(/needs a key/);
      await page.fill('#token', 'not-the-token-but-long-enough-000000');
      await page.click('#token-form button');
      await expect.poll(() => page.locator('#token-form').isVisible()).toBe(true);
      await page.fill('#token', token);
      await page.click('#token-form button');
      await expect.poll(() => page.locator('#events li').count()).toBeGreaterThan(10);
      expect(await page.locator('#token-form').isVisible()).toBe(false);
      expect(errors).toEqual([]);
    } finally {
      await page.close();
      await guarded.close();
    }
  });
});
