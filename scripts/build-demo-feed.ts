/**
 * Builds demo-feed/ from the scenario source (demo-feed/scenario/*.txt): one feed file per
 * outlet in that outlet's format (RSS 2.0, Atom or JSON Feed), the gold file and the
 * story map. Run with `npm run demo:build` after editing the scenario; the outputs are
 * committed so that a fresh clone needs no build step to replay the demo.
 *
 * Scenario format: an article starts with a header line
 *   `# <short id> | <outlet key> | <published, RFC 3339> | <story> | <title>`
 * followed by one sentence per line, each optionally ending in `{event-id, event-id}`.
 * `@copy <short id>` makes the article a verbatim copy of another one's body (wire copy).
 */
import { readFileSync, readdirSync, writeFileSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';

interface Outlet { key: string; name: string; domain: string; format: 'rss' | 'atom' | 'jsonfeed'; description: string }

const OUTLETS: Outlet[] = [
  { key: 'courier', name: 'The Vellmouth Courier', domain: 'vellmouth-courier.example', format: 'rss', description: 'News from Vellmouth and the coast' },
  { key: 'ebs', name: 'EBS News', domain: 'ebs-news.example', format: 'atom', description: 'Estmarch Broadcasting Service news' },
  { key: 'harbourline', name: 'Harbourline Daily', domain: 'harbourline.example', format: 'jsonfeed', description: 'Port, trade and city news' },
  { key: 'ledger', name: 'The Tolvane Ledger', domain: 'tolvane-ledger.example', format: 'rss', description: 'The newspaper of the Tolvane Valley' },
  { key: 'qpost', name: 'Quarrenby Post', domain: 'quarrenby-post.example', format: 'atom', description: 'News for Quarrenby and the north' },
  { key: 'northwire', name: 'Northwire', domain: 'northwire.example', format: 'jsonfeed', description: 'Northwire news agency wire' },
];

/** Story of each event id prefix, and topic of each story. */
const STORY_OF_PREFIX: Record<string, string> = {
  flood: 'flood-valley', bridge: 'flood-bridge', strike: 'port-strike', budget: 'budget', fire: 'warehouse-fire', trial: 'maskell-trial',
};
const TOPIC_OF_STORY: Record<string, string> = {
  'flood-valley': 'floods', 'flood-bridge': 'floods', 'port-strike': 'labour-and-politics', budget: 'labour-and-politics',
  'warehouse-fire': 'courts-and-crime', 'maskell-trial': 'courts-and-crime',
};

interface Line { text: string; events: string[] }
interface ScenarioArticle { short: string; outlet: Outlet; published: string; story: string; title: string; lines: Line[]; copyOf?: string }

const root = new URL('../demo-feed/', import.meta.url).pathname;

function parseScenario(): ScenarioArticle[] {
  const articles: ScenarioArticle[] = [];
  for (const file of readdirSync(join(root, 'scenario')).filter((f) => f.endsWith('.txt')).sort()) {
    let current: ScenarioArticle | undefined;
    for (const raw of readFileSync(join(root, 'scenario', file), 'utf8').split('\n')) {
      const line = raw.trim();
      if (line === '') continue;
      if (line.startsWith('# ')) {
        const [short, outletKey, published, story, ...title] = line.slice(2).split(' | ').map((s) => s.trim());
        const outlet = OUTLETS.find((o) => o.key === outletKey);
        if (!short || !outlet || !published || !story || title.length === 0) throw new Error(`${file}: bad header: ${line}`);
        current = { short, outlet, published, story, title: title.join(' | '), lines: [] };
        articles.push(current);
      } else if (!current) {
        throw new Error(`${file}: text before the first header`);
      } else if (line.startsWith('@copy ')) {
        current.copyOf = line.slice(6).trim();
      } else {
        const m = /^(.*?)\s*\{([^}]*)\}$/.exec(line);
        current.lines.push(m ? { text: m[1]!, events: m[2]!.split(',').map((s) => s.trim()).filter(Boolean) } : { text: line, events: [] });
      }
    }
  }
  for (const a of articles) {
    if (a.copyOf) {
      const original = articles.find((o) => o.short === a.copyOf);
      if (!original) throw new Error(`${a.short}: copy of unknown ${a.copyOf}`);
      a.lines = original.lines;
    }
  }
  return articles.sort((x, y) => x.published.localeCompare(y.published));
}

const idOf = (a: ScenarioArticle): string => `https://${a.outlet.domain}/news/${a.short}`;

/** Paragraphs: the lead sentence alone, then pairs, as news sites lay them out. */
function paragraphs(lines: Line[]): string[][] {
  const out: string[][] = [];
  lines.forEach((l, i) => {
    if (i === 0 || i % 2 === 1) out.push([l.text]);
    else out[out.length - 1]!.push(l.text);
  });
  return out;
}

const escapeXml = (s: string): string =>
  s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
const html = (lines: Line[]): string => paragraphs(lines).map((p) => `<p>${escapeXml(p.join(' '))}</p>`).join('\n');

function rfc822(iso: string): string {
  return new Date(iso).toUTCString().replace('GMT', '+0000');
}

function rss(outlet: Outlet, items: ScenarioArticle[]): string {
  const body = items.map((a) => `    <item>
      <title>${escapeXml(a.title)}</title>
      <link>${idOf(a)}</link>
      <guid isPermaLink="true">${idOf(a)}</guid>
      <pubDate>${rfc822(a.published)}</pubDate>
      <description>${escapeXml(a.lines[0]!.text)}</description>
      <content:encoded><![CDATA[${html(a.lines)}]]></content:encoded>
    </item>`).join('\n');
  return `<?xml version="1.0" encoding="UTF-8"?>
<rss version="2.0" xmlns:content="http://purl.org/rss/1.0/modules/content/">
  <channel>
    <title>${escapeXml(outlet.name)}</title>
    <link>https://${outlet.domain}/</link>
    <description>${escapeXml(outlet.description)}</description>
    <language>en</language>
${body}
  </channel>
</rss>
`;
}

function atom(outlet: Outlet, items: ScenarioArticle[]): string {
  const updated = items[0]!.published;
  const body = items.map((a) => `  <entry>
    <id>${idOf(a)}</id>
    <title>${escapeXml(a.title)}</title>
    <link rel="alternate" type="text/html" href="${idOf(a)}"/>
    <published>${a.published}</published>
    <updated>${a.published}</updated>
    <author><name>${escapeXml(outlet.name)} staff</name></author>
    <content type="html">${escapeXml(html(a.lines))}</content>
  </entry>`).join('\n');
  return `<?xml version="1.0" encoding="utf-8"?>
<feed xmlns="http://www.w3.org/2005/Atom" xml:lang="en">
  <id>https://${outlet.domain}/</id>
  <title>${escapeXml(outlet.name)}</title>
  <subtitle>${escapeXml(outlet.description)}</subtitle>
  <updated>${updated}</updated>
  <link rel="self" href="https://${outlet.domain}/feed.atom"/>
${body}
</feed>
`;
}

function jsonFeed(outlet: Outlet, items: ScenarioArticle[]): string {
  return JSON.stringify({
    version: 'https://jsonfeed.org/version/1.1',
    title: outlet.name,
    home_page_url: `https://${outlet.domain}/`,
    feed_url: `https://${outlet.domain}/feed.json`,
    description: outlet.description,
    language: 'en',
    items: items.map((a) => ({
      id: idOf(a), url: idOf(a), title: a.title, content_html: html(a.lines), date_published: a.published,
      authors: [{ name: `${outlet.name} staff` }],
    })),
  }, null, 2) + '\n';
}

const articles = parseScenario();
mkdirSync(join(root, 'feeds'), { recursive: true });
for (const outlet of OUTLETS) {
  const items = articles.filter((a) => a.outlet.key === outlet.key).reverse(); // feeds list newest first
  const [ext, text] = outlet.format === 'rss' ? ['rss.xml', rss(outlet, items)]
    : outlet.format === 'atom' ? ['atom.xml', atom(outlet, items)] : ['feed.json', jsonFeed(outlet, items)];
  writeFileSync(join(root, 'feeds', `${outlet.key}.${ext}`), text);
}

const gold: string[] = [];
const stories: string[] = [];
let crossStory = 0;
let multiEvent = 0;
for (const a of articles) {
  stories.push(JSON.stringify({ article: idOf(a), outlet: a.outlet.name, topic: TOPIC_OF_STORY[a.story], story: a.story, copyOf: a.copyOf ? idOf(articles.find((o) => o.short === a.copyOf)!) : null }));
  a.lines.forEach((l, sentence) => {
    if (l.events.length > 1) multiEvent++;
    if (l.events.some((e) => STORY_OF_PREFIX[e.split('-')[0]!] !== a.story)) crossStory++;
    for (const event of l.events) {
      if (!STORY_OF_PREFIX[event.split('-')[0]!]) throw new Error(`${a.short}: event ${event} has no known story prefix`);
      gold.push(JSON.stringify({ article: idOf(a), sentence, text: l.text, event }));
    }
  });
}
writeFileSync(join(root, 'gold.jsonl'), gold.join('\n') + '\n');
writeFileSync(join(root, 'stories.jsonl'), stories.join('\n') + '\n');
const days = new Set(articles.map((a) => a.published.slice(0, 10))).size;
console.log(`${articles.length} articles over ${days} days, ${gold.length} gold lines, ${crossStory} cross-story sentences, ${multiEvent} multi-event sentences`);
