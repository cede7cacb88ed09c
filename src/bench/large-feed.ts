/**
 * A large RSS 2.0 feed for the benchmark (never for correctness claims): the synthetic
 * stream's articles as the items of one invented outlet's feed, each with a few paragraphs
 * of background so the file is about the size of a real archive feed (2 KB an item).
 */
import { syntheticStream } from './synthetic-stream.js';

const FILLER = [
  'The harbour district has changed a great deal over the past decade, residents say, with new housing along the old quays.',
  'Local officials have promised a review of procedures, and a report is due before the end of the season.',
  'Traders in the covered market said business had been slow for weeks and that many were worried about the winter.',
  'The regional council meets every second Thursday, and its agenda is published a week before each meeting.',
  'Ferry services to the outer islands run twice a day in winter and four times a day from the spring onwards.',
  'The town library keeps an archive of local newspapers going back more than a century, open to anyone who asks.',
  'A community fund set up last year has paid for new lighting on the promenade and repairs to the sea wall.',
  'Weather forecasters expect a mild week with showers in the west and brighter spells further inland.',
  'Several schools in the district have begun a programme of evening classes for adults, which has proved popular.',
  'The main road through the valley is often closed for a few hours in spring when the river runs high.',
];

const FIVE_YEARS_MS = 5 * 365 * 86_400_000;

/** XML text escaping for element content. */
function esc(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;');
}

/** An RSS document with `items` items (the synthetic stream's first ones), seeded. */
export function largeFeed(items: number, seed = 11): string {
  const stream = syntheticStream(items * 4, seed);
  const out: string[] = [
    '<?xml version="1.0" encoding="UTF-8"?>\n<rss version="2.0"><channel><title>Tessel Bay Wire</title><link>https://tesselbay.example/</link><description>Archive feed</description>',
  ];
  for (const a of stream.articles.slice(0, items)) {
    const body = [...a.sentences, ...FILLER].map((p) => `<p>${esc(p)}</p>`).join('');
    // The stream is dated from 2030; an archive is dated in the past (feeds refuse far-future dates).
    const published = new Date(Date.parse(a.published!) - FIVE_YEARS_MS).toUTCString();
    out.push(
      `<item><title>${esc(a.title)}</title><link>https://tesselbay.example/news/${a.id}</link><guid>https://tesselbay.example/news/${a.id}</guid><pubDate>${published}</pubDate><description>${esc(body)}</description></item>`,
    );
  }
  out.push('</channel></rss>\n');
  return out.join('\n');
}
