import { existsSync, mkdirSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { createRequire } from 'node:module';
import type { FastifyInstance } from 'fastify';
import { type Browser, type Page, chromium } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../src/api/build-app.js';
import { DEMO_FEEDS } from '../../src/cli/common.js';
import { parseConfig } from '../../src/config/load-config.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { applyCorrection } from '../../src/link/corrections.js';
import { createLogger } from '../../src/logger.js';
import { WebhookDispatcher } from '../../src/notify/webhook-dispatcher.js';
import { FeedPoller } from '../../src/poll/feed-poller.js';
import type { Article } from '../../src/records.js';
import type { Runtime } from '../../src/runtime.js';
import { runArticles, testConfig, testRuntime } from '../helpers/runtime.js';

// Debian's chromium, driven headless; .ci/run installs it. Never a downloaded browser.
const CHROMIUM = '/usr/bin/chromium';
// Screenshots of each view, kept as the run's artefacts (not committed).
const SCREENS = 'test-artifacts/screens';
const AXE = createRequire(import.meta.url).resolve('axe-core/axe.min.js');

const silent = createLogger('silent');
const status = (n: number) => () => ({ state: 'replaying' as const, processed: n, total: 101, stored: n, rejected: 0 });

/** An app over a runtime that makes corrections in its turn, as `serve` does. */
function deskApp(rt: Runtime, extra: Partial<Parameters<typeof buildApp>[0]> = {}) {
  return buildApp({
    store: rt.store,
    logger: silent,
    version: 'test',
    ingestStatus: status(101),
    corrections: (req, author) => applyCorrection(rt, req, author),
    linkSettings: { threshold: rt.config.link.threshold, calibration: rt.config.link.calibration.mode },
    ...extra,
  });
}

describe.skipIf(!existsSync(CHROMIUM) && process.env.CI !== 'true')('the desk in a browser', () => {
  let browser: Browser;
  let demo: Article[];

  beforeAll(async () => {
    mkdirSync(SCREENS, { recursive: true });
    demo = (await readReplayInput([DEMO_FEEDS], testConfig().ingest)).articles;
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking'],
    });
  });
  afterAll(async () => {
    await browser?.close();
  });

  /** A page that records its script errors; CSP is bypassed only so that the test can add axe-core. */
  async function open(url: string): Promise<{ page: Page; errors: string[] }> {
    const context = await browser.newContext({ bypassCSP: true, viewport: { width: 1360, height: 1000 } });
    const page = await context.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(url);
    return { page, errors };
  }

  /** axe-core's serious and critical violations on the page as it stands, with the nodes they name. */
  async function accessibilityProblems(page: Page): Promise<string[]> {
    if (!(await page.evaluate("'axe' in window"))) await page.addScriptTag({ path: AXE });
    const violations = (await page.evaluate(
      'axe.run(document).then((r) => r.violations.map((v) => ({ id: v.id, impact: v.impact, nodes: v.nodes.map((n) => n.target.join(" ")) })))',
    )) as { id: string; impact: string; nodes: string[] }[];
    return violations
      .filter((v) => v.impact === 'serious' || v.impact === 'critical')
      .map((v) => `${v.impact} ${v.id}: ${v.nodes.slice(0, 3).join(', ')}`);
  }

  /** Saves a screenshot of the view and checks it with axe-core. */
  async function shootAndCheck(page: Page, name: string): Promise<void> {
    await page.screenshot({ path: `${SCREENS}/${name}.png`, fullPage: true });
    expect(await accessibilityProblems(page), `accessibility of ${name}`).toEqual([]);
  }

  it('shows a story appear during a replay and grow in place, without a reload', async () => {
    const rt = await testRuntime();
    const app = await deskApp(rt, { ingestStatus: status(0) });
    const base = await app.listen({ host: '127.0.0.1', port: 0 });
    const { page, errors } = await open(`${base}/`);
    try {
      await expect.poll(() => page.locator('#count').textContent()).toBe('0 stories');
      await expect.poll(() => page.locator('#live').textContent()).toMatch(/live/);
      await page.evaluate('window.notReloaded = true');

      await runArticles(rt, demo.slice(0, 12));
      await expect
        .poll(() => page.locator('#fresh').textContent(), { timeout: 10_000 })
        .toMatch(/^\d+ stor(y|ies) new or with new activity/);
      expect(await page.locator('#desk-list li').count()).toBe(0);
      await page.click('#fresh');
      await expect.poll(() => page.locator('#desk-list li').count()).toBeGreaterThan(0);
      const before = await page
        .locator('#desk-list li')
        .evaluateAll((lis) => lis.map((li) => [li.getAttribute('data-id'), li.textContent]));

      await runArticles(rt, demo.slice(12, 60));
      // Rows already shown change where they stand; the list keeps its order.
      await expect.poll(() => page.locator('#desk-list li.updated').count(), { timeout: 10_000 }).toBeGreaterThan(0);
      const after = await page.locator('#desk-list li').evaluateAll((lis) => lis.map((li) => [li.getAttribute('data-id'), li.textContent]));
      expect(after.map(([id]) => id)).toEqual(before.map(([id]) => id));
      const grown = after.filter(([, text], i) => text !== before[i]![1]);
      expect(grown.length).toBeGreaterThan(0);
      const articles = (t: string | null) => Number(/(\d+) articles?/.exec(t ?? '')![1]);
      for (const [id, text] of grown) expect(articles(text)).toBeGreaterThan(articles(before.find(([b]) => b === id)![1]));
      expect(await page.evaluate('window.notReloaded')).toBe(true);
      await shootAndCheck(page, 'desk-during-replay');
      expect(errors).toEqual([]);
    } finally {
      await page.context().close();
      await app.close();
      await rt.close();
    }
  });

  describe('over the whole demo', () => {
    let rt: Runtime;
    let app: FastifyInstance;
    let base: string;
    let receiver: Server;
    let dispatcher: WebhookDispatcher;
    const feedsConfig = testConfig().poll;

    beforeAll(async () => {
      rt = await testRuntime();
      await runArticles(rt, demo);
      receiver = createServer((req, res) => req.resume().on('end', () => res.writeHead(204).end()));
      await new Promise<void>((r) => receiver.listen(0, '127.0.0.1', r));
      const webhooks = parseConfig({ webhooks: { allowPrivateNetworks: true, maxAttempts: 1 } }).webhooks;
      const poller = new FeedPoller({
        store: rt.store,
        submit: async () => undefined,
        options: feedsConfig,
        logger: silent,
        limits: testConfig().ingest,
      });
      app = await deskApp(rt, { webhooks, feeds: poller });
      base = await app.listen({ host: '127.0.0.1', port: 0 });
      const made = await app.inject({
        method: 'POST',
        url: '/api/subscriptions',
        payload: {
          name: 'bridge-desk',
          url: `http://127.0.0.1:${(receiver.address() as AddressInfo).port}/hook`,
          rules: [{ name: 'bridge', words: ['bridge'] }],
        },
      });
      expect(made.statusCode).toBe(201);
      dispatcher = new WebhookDispatcher({ store: rt.store, config: webhooks, logger: silent, now: () => new Date() });
      await dispatcher.tick();
    });
    afterAll(async () => {
      await dispatcher?.stop();
      await app?.close();
      await new Promise((r) => receiver?.close(r));
      await rt?.close();
    });

    it('lists stories and events with filters, and passes the accessibility check', async () => {
      const { page, errors } = await open(`${base}/`);
      try {
        await expect.poll(() => page.locator('#desk-list li').count()).toBeGreaterThan(10);
        expect(await page.locator('#status').textContent()).toMatch(/101 articles · \d+ stories/);
        expect(await page.locator('.caution').textContent()).toMatch(/machine suggestions/);
        await shootAndCheck(page, 'desk-stories');

        await page.check('#mode-events');
        await expect.poll(() => page.locator('#count').textContent()).toMatch(/^\d+ events$/);
        await page.fill('#place', 'Dunvessel');
        await expect.poll(async () => Number(/^(\d+)/.exec((await page.locator('#count').textContent()) ?? '')?.[1])).toBeGreaterThan(0);
        const expected = (await app.inject({ url: '/api/events?place=Dunvessel' })).json().total;
        await expect.poll(() => page.locator('#count').textContent()).toBe(`${expected} events`);
        await shootAndCheck(page, 'desk-events-filtered');
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('shows a story with its outlets as lanes, first reports and copies marked, and names who reported first', async () => {
      const story = (await app.inject({ url: '/api/stories?sort=outlets&limit=1' })).json().stories[0];
      const detail = (await app.inject({ url: `/api/stories/${story.id}` })).json();
      const { page, errors } = await open(`${base}/#/stories/${story.id}`);
      try {
        await page.locator('.lane-chart').waitFor();
        expect(await page.locator('#view-title').textContent()).toBe(story.label);
        expect(await page.locator('.lane-chart .lane').count()).toBe(detail.byOutlet.length);
        expect(await page.locator('.lane-chart .lane-label').allTextContents()).toEqual(
          detail.byOutlet.map((g: { outlet: string }) => g.outlet),
        );
        const dated = detail.byOutlet.flatMap((g: { articles: { published: string | null }[] }) => g.articles.filter((a) => a.published));
        expect(await page.locator('.lane-chart a.mark').count()).toBe(dated.length);
        expect(await page.locator('.lane-chart a.mark-first').count()).toBe(detail.byOutlet.length);
        expect(await page.locator('.lane-chart .legend').textContent()).toMatch(/first report.*later report.*copy/);
        expect(await page.locator('.first-reporters').textContent()).toContain(
          `First covered by ${detail.timeline.find((t: { newOutlets: string[] }) => t.newOutlets.length).newOutlets.join(', ')}`,
        );
        expect(await page.locator('.story-events li').count()).toBe(detail.events.length);
        await shootAndCheck(page, 'story');

        // A mark is a link to its article, reachable from the keyboard.
        await page.locator('.lane-chart a.mark').first().focus();
        await page.keyboard.press('Enter');
        await page.locator('.article-view').waitFor();
        expect(await page.locator('.sentence.is-mention').count()).toBeGreaterThan(0);
        await shootAndCheck(page, 'article');
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('says on the event page which sentences only point back at the event, as a guess', async () => {
      let found: { id: string; text: string } | undefined;
      for (const e of (await app.inject({ url: '/api/events?limit=200' })).json().events as { id: string }[]) {
        const detail = (await app.inject({ url: `/api/events/${e.id}` })).json();
        const back = detail.byOutlet
          .flatMap((g: { mentions: { text: string; evidence: { refersBack?: boolean } }[] }) => g.mentions)
          .find((m: { evidence: { refersBack?: boolean } }) => m.evidence.refersBack);
        if (back) found ??= { id: e.id, text: back.text };
      }
      expect(found).toBeDefined();
      const { page, errors } = await open(`${base}/#/events/${found!.id}`);
      try {
        const item = page.locator('li', { hasText: found!.text }).filter({ hasText: 'refers back' });
        await item.first().waitFor();
        expect(await item.first().textContent()).toMatch(/points back at a happening .* a guess, not counted/);
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('merges two events from the page, the desk follows, and the merge is undone', async () => {
      const story = (await app.inject({ url: '/api/stories?sort=articles&limit=1' })).json().stories[0];
      const [a, b] = (await app.inject({ url: `/api/events?story=${story.id}&sort=mentions&limit=2` })).json().events;
      const { page, errors } = await open(`${base}/#/events/${a.id}`);
      try {
        await page.check('#mode-events');
        await page.locator('.event-view').waitFor();
        expect(await page.locator('.facts').textContent()).toMatch(/Happened.*Reported/s);
        expect(await page.locator('.day-chart').getAttribute('aria-label')).toMatch(/mentions over \d+ day/);
        await shootAndCheck(page, 'event');

        await page.fill('#merge-into', b.id);
        await page.fill('#correction-note', 'same walkout, two reports');
        await page.click('#merge-button');
        await expect
          .poll(() => page.locator('.corrections .action-status').textContent())
          .toMatch(/Merged this event into the other \(cr_[0-9a-f]{12}\)/);
        const merged = (await app.inject({ url: `/api/events/${b.id}` })).json().event;
        // A sentence linked to both counts once.
        expect(merged.mentionCount).toBeGreaterThan(b.mentionCount);
        // The survivor's view is drawn, keeping the outcome and its undo.
        await expect.poll(() => page.locator('#view-title').textContent()).toBe(merged.label);
        expect(page.url()).toContain(`#/events/${b.id}`);
        // The merged-away event's row, if shown, is marked where it stands; the survivor's row grows.
        expect((await app.inject({ url: `/api/events/${a.id}` })).statusCode).toBe(308);
        await expect
          .poll(() => page.locator(`#desk-list li[data-id="${b.id}"] .meta`).first().textContent(), { timeout: 10_000 })
          .toMatch(new RegExp(`${merged.mentionCount} mentions`));

        await page.locator('.corrections .action-status button.undo').click();
        await expect.poll(() => page.locator('.corrections .action-status').textContent()).toMatch(/Undone/);
        await expect.poll(() => page.locator('#view-title').textContent()).toBe(a.label);
        expect(page.url()).toContain(`#/events/${a.id}`);
        expect((await app.inject({ url: `/api/events/${a.id}` })).json().event.mentionCount).toBe(a.mentionCount);

        await page.click('.tabs a[data-tab="corrections"]');
        await page.locator('#audit-log').waitFor();
        const rows = await page.locator('#audit-log tbody tr').allTextContents();
        expect(rows[0]).toMatch(/undid a correction/);
        expect(rows[1]).toMatch(/merged an event into another.*same walkout, two reports.*undone by/);
        await shootAndCheck(page, 'corrections');
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('splits chosen sentences off an event, moves one back and detaches another, from the page', async () => {
      const [event] = (await app.inject({ url: '/api/events?sort=mentions&limit=1' })).json().events;
      const { page, errors } = await open(`${base}/#/events/${event.id}`);
      try {
        await page.locator('.event-view').waitFor();
        // Nothing chosen: the page says so rather than sending an empty correction.
        await page.click('button:has-text("Split chosen")');
        expect(await page.locator('.corrections .action-status').textContent()).toMatch(/Choose one or more sentences/);
        const boxes = page.locator('.mention-pick input[type=checkbox]');
        await boxes.nth(1).check();
        await boxes.nth(2).check();
        await page.click('button:has-text("Split chosen")');
        await expect
          .poll(() => page.locator('.corrections .action-status').textContent())
          .toMatch(/Split the chosen sentences into a new event \((cr_[0-9a-f]{12})\)/);
        const split = (await app.inject({ url: '/api/corrections?limit=1' })).json().corrections[0];
        expect(split).toMatchObject({ kind: 'split', events: [event.id, expect.stringMatching(/^ev_/)] });
        expect(split.mentions).toHaveLength(2);
        const newEvent = split.events[1];
        expect((await app.inject({ url: `/api/events/${event.id}` })).json().event.mentionCount).toBe(event.mentionCount - 2);

        // Move one of them back, by the new event's page and the event picker.
        await page.goto(`${base}/#/events/${newEvent}`);
        // The hash changes within the page: wait for that event's view, not the one before it.
        await page.locator(`.event-view[data-id="${newEvent}"]`).waitFor();
        await page.locator('.mention-pick input[type=checkbox]').first().check();
        await page.fill('#move-to', event.id);
        await page.click('.actions button:has-text("Move")');
        await expect.poll(() => page.locator('.corrections .action-status').textContent()).toMatch(/Moved the chosen sentences/);
        expect((await app.inject({ url: `/api/events/${newEvent}` })).json().event.mentionCount).toBe(1);
        // The view is drawn again with what is left.
        await expect.poll(() => page.locator('.mention').count()).toBe(1);

        await page.goto(`${base}/#/events/${event.id}`);
        await page.locator(`.event-view[data-id="${event.id}"]`).waitFor();
        await page.locator('.mention button:has-text("Detach")').last().click();
        await expect.poll(() => page.locator('.corrections .action-status').textContent()).toMatch(/Detached the sentence/);
        const log = (await app.inject({ url: '/api/corrections?limit=3' })).json().corrections.map((c: { kind: string }) => c.kind);
        expect(log).toEqual(['detach', 'move', 'split']);
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('can be used from the keyboard alone, and names its parts for a screen reader', async () => {
      const { page, errors } = await open(`${base}/`);
      try {
        await expect.poll(() => page.locator('#desk-list li').count()).toBeGreaterThan(10);
        // The first Tab reaches the skip link; following it puts focus on the content.
        await page.keyboard.press('Tab');
        expect(await page.evaluate('document.activeElement.textContent')).toBe('Skip to the content');
        await page.keyboard.press('Enter');
        // Tab on through the filters to the first story, and open it with Enter.
        let name = '';
        for (let i = 0; i < 30 && !name.startsWith('#/stories/'); i++) {
          await page.keyboard.press('Tab');
          name = (await page.evaluate('document.activeElement.getAttribute("href") || ""')) as string;
        }
        expect(name).toMatch(/^#\/stories\/st_/);
        await page.keyboard.press('Enter');
        await page.locator('.story-view').waitFor();
        // Focus moves to the view's heading, so a screen reader reads what opened.
        expect(await page.evaluate('document.activeElement.id')).toBe('view-title');
        const tree = await page.locator('body').ariaSnapshot();
        expect(tree).toMatch(/navigation "Views"/);
        expect(tree).toMatch(/link "Desk"/);
        expect(tree).toMatch(/search "Filter the desk"/);
        expect(tree).toMatch(/list "Stories"/);
        expect(tree).toMatch(/group "Articles of this story by outlet and time of publication: \d+ outlet/);
        expect(tree).toMatch(/searchbox "Participant"/);
        expect(tree).toMatch(/combobox "Outlet"/);
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('adds, pauses and removes a feed, and shows a subscription with its delivery log', async () => {
      // An article about the bridge arrives after the subscription was made: its rule selects what it causes.
      const bridge = demo.find((a) => /bridge/i.test(a.title))!;
      await runArticles(rt, [
        { ...bridge, id: 'https://late-wire.example/1', url: 'https://late-wire.example/1', outlet: 'Late Wire', contentHash: 'late-1' },
      ]);
      await dispatcher.tick();
      await expect
        .poll(
          async () => (await app.inject({ url: '/api/subscriptions/bridge-desk/deliveries?status=delivered' })).json().deliveries.length,
        )
        .toBeGreaterThan(0);
      const { page, errors } = await open(`${base}/#/feeds`);
      try {
        await page.locator('.add-form').waitFor();
        await page.fill('#feed-url', 'https://wire.example/rss.xml');
        await page.fill('#feed-outlet', 'Example Wire');
        await page.click('.add-form button[type=submit]');
        await expect.poll(() => page.locator('#feeds tbody tr').count()).toBe(1);
        expect(await page.locator('#feeds tbody tr').textContent()).toMatch(/Example Wire.*not polled yet/);
        await shootAndCheck(page, 'feeds');
        await page.click('#feeds button:has-text("Pause")');
        await expect.poll(() => page.locator('#feeds tbody tr .health').textContent()).toMatch(/paused/);
        page.once('dialog', (d) => void d.accept());
        await page.click('#feeds button:has-text("Remove")');
        await expect.poll(() => page.locator('#feeds').count()).toBe(0);

        await page.click('.tabs a[data-tab="alerts"]');
        await page.locator('#subscriptions').waitFor();
        expect(await page.locator('#subscriptions tbody').textContent()).toMatch(/bridge-desk.*bridge: words: bridge.*active/);
        await page.click('#subscriptions button:has-text("Delivery log")');
        await page.locator('#deliveries').waitFor();
        expect(await page.locator('#deliveries tbody tr').count()).toBeGreaterThan(0);
        await shootAndCheck(page, 'alerts');
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('lists a story’s articles under its lane chart, and moves chosen ones to a new story', async () => {
      const stories = (await app.inject({ url: '/api/stories?sort=articles&limit=200' })).json().stories as {
        id: string;
        articleCount: number;
      }[];
      const story = stories.filter((x) => x.articleCount >= 3).at(-1)!;
      const { page, errors } = await open(`${base}/#/stories/${story.id}`);
      try {
        await page.locator('.story-view').waitFor();
        await page.click('.articles-list summary');
        const boxes = page.locator('.articles-list input[type=checkbox]');
        expect(await boxes.count()).toBe(story.articleCount);
        await boxes.last().check();
        await page.click('#divide-button');
        await expect
          .poll(() => page.locator('.corrections .action-status').textContent())
          .toMatch(/Moved the chosen articles to a new story \(cr_/);
        const c = (await app.inject({ url: '/api/corrections?limit=1' })).json().corrections[0];
        expect(c).toMatchObject({ kind: 'split-story', events: [story.id, expect.stringMatching(/^st_/)] });
        await expect
          .poll(async () => (await app.inject({ url: `/api/stories/${story.id}` })).json().story.articleCount)
          .toBe(story.articleCount - 1);
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('runs a review round from the page: start it, answer every item, read the report', async () => {
      const { page, errors } = await open(`${base}/#/reviews`);
      try {
        await page.locator('form[aria-label="Start a review round"]').waitFor();
        await page.fill('#review-size', '8');
        await page.fill('#review-per-item', '1');
        await page.click('form[aria-label="Start a review round"] button');
        await expect.poll(() => page.url()).toMatch(/#\/reviews\/rv_[0-9a-f]{12}$/);
        await page.locator('#reviewer-name').waitFor();
        await page.fill('#reviewer-name', 'Ana');
        await page.click('form[aria-label="Who is reviewing"] button');
        await page.locator('#review-card').waitFor();
        expect(await page.locator('#review-card').textContent()).toMatch(/Does this sentence report the same happening/);
        await shootAndCheck(page, 'review-item');
        for (let i = 0; i < 8; i++) {
          const before = await page.locator('#review-card .kind').textContent();
          // A merge is shown with its merge score, not as a link's score against a bar.
          const meta = await page.locator('#review-card p[data-role=score]').textContent();
          expect(meta).toMatch(before!.includes('consolidation merged') ? /^merge score/ : /^score .* needed/);
          await page.click(i % 3 ? '#review-card button:has-text("Same event")' : '#review-card button:has-text("Different events")');
          if (i < 7) await expect.poll(() => page.locator('#review-card .kind').textContent()).not.toBe(before);
        }
        await expect.poll(() => page.locator('#review-item').textContent()).toMatch(/Nothing left for you/);
        await expect.poll(() => page.locator('#review-report').textContent()).toMatch(/8 of 8 items answered/);
        expect(await page.locator('#reviewers tbody tr').count()).toBe(1);
        expect(await page.locator('.interval-chart').count()).toBe(4);
        await shootAndCheck(page, 'review-report');
        await page.click('#review-apply');
        await expect
          .poll(() => page.locator('#review-apply + .action-status').textContent())
          .toMatch(/corrections? made, \d+ refused .*agreed with the linker/);
        // The threshold: as configured, then moved by hand, shown, and rolled back from the page.
        expect(await page.locator('#threshold-in-effect').textContent()).toMatch(/as configured/);
        const moved = await fetch(`${base}/api/link-threshold`, {
          method: 'POST',
          headers: { 'content-type': 'application/json' },
          body: JSON.stringify({ offset: -0.03, note: 'by hand' }),
        });
        expect(moved.status).toBe(200);
        await page.reload();
        await expect.poll(() => page.locator('#threshold-in-effect').textContent()).toMatch(/moved by −0\.030.*set by hand/);
        await page.click('#threshold-rollback');
        await expect.poll(() => page.locator('#threshold-in-effect').textContent()).toMatch(/as configured/);
        expect(rt.linker.thresholdAdjustment).toBe(0);
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
      }
    });

    it('asks for an API key when the server protects reads, and shows the desk once given one', async () => {
      const token = 'k7Qz2mVw9XcB4nRt8LpY3sHd6FgJ1aEu';
      const guarded = await deskApp(rt, { auth: { tokens: [token], protect: 'everything' } });
      const url = await guarded.listen({ host: '127.0.0.1', port: 0 });
      const { page, errors } = await open(`${url}/`);
      try {
        await page.locator('#token-form').waitFor();
        expect(await page.locator('#desk-list li').count()).toBe(0);
        await expect.poll(() => page.locator('#count').textContent()).toMatch(/Could not load/);
        await page.fill('#token', 'not-the-token-but-long-enough-000000');
        await page.click('#token-form button');
        await expect.poll(() => page.locator('#token-form').isVisible()).toBe(true);
        await page.fill('#token', token);
        await page.click('#token-form button');
        await expect.poll(() => page.locator('#desk-list li').count()).toBeGreaterThan(10);
        expect(await page.locator('#token-form').isVisible()).toBe(false);
        // Without a stream (a browser's cannot carry the key) the desk says it refreshes by polling.
        expect(await page.locator('#live').textContent()).toMatch(/refreshing every 5 s/);
        expect(errors).toEqual([]);
      } finally {
        await page.context().close();
        await guarded.close();
      }
    });
  });
});
