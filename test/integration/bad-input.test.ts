import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import iconv from 'iconv-lite';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli } from '../helpers/cli-in-process.js';
import { runSources, type RunSummary } from '../../src/cli/run-sources.js';
import type { Runtime } from '../../src/runtime.js';
import { testRuntime } from '../helpers/runtime.js';

const dir = mkdtempSync(join(tmpdir(), 'strandline-bad-'));

const rss = (items: string, prolog = '<?xml version="1.0" encoding="UTF-8"?>') =>
  `${prolog}<rss version="2.0"><channel><title>Test Outlet</title><link>https://t.example/</link><description>d</description>${items}</channel></rss>`;
const item = (guid: string, body: string) =>
  `<item><title>Item ${guid}</title><guid>https://t.example/${guid}</guid><pubDate>Mon, 05 Oct 2026 10:00:00 GMT</pubDate><description>${body}</description></item>`;

beforeAll(() => {
  writeFileSync(
    join(dir, 'good.xml'),
    rss(item('good-1', 'Police arrested a man in Vellmouth on Sunday.') + item('good-2', 'The bridge reopened on Monday.')),
  );
  writeFileSync(join(dir, 'malformed.xml'), '<rss version="2.0"><channel><title>Broken</title><item><title>unclosed</channel></rss>');
  writeFileSync(
    join(dir, 'empty-item.json'),
    JSON.stringify({
      version: 'https://jsonfeed.org/version/1.1',
      title: 'JSON Outlet',
      items: [
        { id: 'https://j.example/empty', content_text: '   ' },
        { id: 'https://j.example/ok', title: 'Fine', content_text: 'The council voted on Tuesday.' },
      ],
    }),
  );
  writeFileSync(
    join(dir, 'huge.json'),
    JSON.stringify({
      version: 'https://jsonfeed.org/version/1.1',
      title: 'Huge Outlet',
      items: [
        { id: 'https://h.example/huge', title: 'Huge', content_text: 'word '.repeat(2 * 1024 * 1024) },
        { id: 'https://h.example/small', title: 'Small', content_text: 'The mayor resigned on Friday.' },
      ],
    }),
  );
  // windows-1252 bytes (0x93 0x94 curly quotes, 0xE9 é) with no declaration: not UTF-8.
  writeFileSync(
    join(dir, 'legacy.xml'),
    iconv.encode(rss(item('legacy-1', 'The café owner said “we reopened on Monday.”'), '<?xml version="1.0"?>'), 'windows-1252'),
  );
  writeFileSync(join(dir, 'binary.xml'), Buffer.from(Array.from({ length: 4096 }, (_, i) => (i * 7919) % 256)));
});

describe('a replay over bad input', () => {
  let rt: Runtime;
  let summary: RunSummary;
  beforeAll(async () => {
    rt = await testRuntime();
    summary = await runSources(rt, [dir]);
  });
  afterAll(async () => rt.close());

  it('keeps going and stores every good article', async () => {
    // Six files, of which the malformed and the binary one could not be read as feeds.
    expect(summary.files).toBe(4);
    for (const id of [
      'https://t.example/good-1',
      'https://t.example/good-2',
      'https://j.example/ok',
      'https://h.example/small',
      'https://t.example/legacy-1',
    ]) {
      expect(await rt.store.hasArticle(id)).toBe(true);
    }
    expect(summary.stored).toBe(5);
  });

  it('reports each problem with a code and a reason', () => {
    const by = (file: string) => summary.problems.filter((p) => p.source.endsWith(file)).map((p) => `${p.severity} ${p.code}`);
    expect(by('malformed.xml')).toEqual(['error STRAND_FEED_MALFORMED']);
    expect(by('empty-item.json')).toEqual(['error STRAND_ARTICLE_EMPTY']);
    expect(by('huge.json')).toEqual(['error STRAND_ARTICLE_TOO_LARGE']);
    expect(by('legacy.xml')).toEqual(['warning STRAND_ENCODING_UNSUPPORTED']);
    expect(by('binary.xml')[0]).toMatch(/^(error|warning) STRAND_/);
    for (const p of summary.problems) expect(p.message.length).toBeGreaterThan(10);
  });

  it('reads the undeclared windows-1252 file correctly', async () => {
    expect((await rt.store.getArticle('https://t.example/legacy-1'))!.article.text).toBe('The café owner said “we reopened on Monday.”');
  });

  it('prints the problems in the command summary, stores the rest, and exits 1 since files could not be read', async () => {
    const r = await cli('replay', dir, '--db', join(dir, 'cli.sqlite'), '--no-progress', '--log-level', 'silent');
    expect(r.status).toBe(1);
    expect(r.stdout).toMatch(/stored {4}5 article/);
    expect(r.stdout).toMatch(/malformed\.xml: STRAND_FEED_MALFORMED: malformed XML at line \d+/);
    expect(r.stdout).toMatch(/STRAND_ARTICLE_TOO_LARGE: article body of \d+ characters exceeds ingest\.maxArticleChars/);
  });

  it('fails with a clear message when nothing can be read', async () => {
    const r = await cli('replay', join(dir, 'no-such-folder'), '--db', join(dir, 'none.sqlite'), '--no-progress', '--log-level', 'silent');
    expect(r.status).toBe(1);
    expect(r.stdout).toMatch(/STRAND_SOURCE_UNREADABLE: cannot read .*no-such-folder: ENOENT/);
  });
});
