import { describe, expect, it } from 'vitest';
import { canonicalUrl } from '../../src/ingest/canonical-url.js';

describe('canonical article URLs', () => {
  it.each([
    ['https://Courier.Example/News/a1', 'https://courier.example/News/a1'],
    ['https://courier.example:443/news/a1#comments', 'https://courier.example/news/a1'],
    ['http://courier.example/news/a1', 'https://courier.example/news/a1'],
    ['https://courier.example/news/a1/', 'https://courier.example/news/a1'],
    ['https://courier.example/news/a1?utm_source=rss&utm_medium=feed', 'https://courier.example/news/a1'],
    ['https://courier.example/news/a1?id=7&fbclid=x&page=2', 'https://courier.example/news/a1?id=7&page=2'],
    ['https://courier.example/', 'https://courier.example/'],
  ])('reads %s as %s', (given, expected) => {
    expect(canonicalUrl(given)).toBe(expected);
  });

  it('has none for what is not an absolute http(s) URL', () => {
    for (const bad of [null, '', '/news/a1', 'javascript:alert(1)', 'mailto:desk@courier.example', 'not a url'])
      expect(canonicalUrl(bad)).toBeNull();
  });
});
