import type { LookupAddress } from 'node:dns';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { replayCommand } from '../../src/cli/commands/replay.js';
import { parseConfig } from '../../src/config/load-config.js';
import { fetchFullText } from '../../src/ingest/fetch-full-text.js';
import { FEED_NAMES, NetworkGuard, WEBHOOK_NAMES, refusedAddress } from '../../src/ingest/network-guard.js';
import { fetchFeed, readFeedDocument } from '../../src/ingest/read-source.js';

// Ranges: the IANA IPv4 and IPv6 Special-Purpose Address Registries (RFC 6890 and updates:
// RFC 6598 shared space, RFC 4193 unique local, RFC 4291 link-local and multicast, RFC 5737
// and RFC 3849 documentation). Addresses carrying an IPv4 address: RFC 4291 §2.5.5.1
// (IPv4-compatible) and §2.5.5.2 (IPv4-mapped), RFC 6145 (IPv4-translated), RFC 6052 §2.1
// (the NAT64 well-known prefix 64:ff9b::/96) and RFC 8215 (64:ff9b:1::/48, local use),
// RFC 3056 (6to4, 2002::/16). Public examples are well-known public resolvers' addresses.
describe('addresses refused without permission', () => {
  it.each([
    ['127.0.0.1', 'loopback'],
    ['127.255.0.9', 'loopback'],
    ['10.1.2.3', 'private'],
    ['172.16.0.1', 'private'],
    ['172.31.255.255', 'private'],
    ['192.168.1.1', 'private'],
    ['169.254.169.254', 'link-local'],
    ['100.64.0.1', 'shared address space, RFC 6598'],
    ['0.0.0.0', 'unspecified'],
    ['224.0.0.251', 'multicast'],
    ['255.255.255.255', 'broadcast'],
    ['192.0.2.1', 'reserved or documentation'],
    ['198.18.0.1', 'reserved or documentation'],
    ['::1', 'loopback'],
    ['::', 'unspecified'],
    ['fe80::1', 'link-local'],
    ['fd12:3456::1', 'unique local'],
    ['fec0::1', 'site-local'],
    ['2001:db8::1', 'reserved or documentation'],
    ['ff02::1', 'multicast'],
    ['2001:0:4136:e378::1', 'Teredo tunnel'],
    ['64:ff9b:1::a00:1', 'local-use IPv4/IPv6 translation, RFC 8215'],
  ])('%s (%s)', (address, why) => {
    expect(refusedAddress(address)).toBe(why);
  });

  it.each([
    // IPv4-mapped, dotted and in hexadecimal groups, as the URL parser rewrites it (RFC 4291 §2.5.5.2).
    ['::ffff:127.0.0.1', 'loopback'],
    ['::ffff:7f00:1', 'loopback'],
    ['0:0:0:0:0:ffff:127.0.0.1', 'loopback'],
    ['::ffff:169.254.169.254', 'link-local'],
    ['::ffff:a9fe:a9fe', 'link-local'],
    ['::ffff:10.0.0.1', 'private'],
    // IPv4-compatible, deprecated (RFC 4291 §2.5.5.1).
    ['::7f00:1', 'loopback'],
    ['::127.0.0.1', 'loopback'],
    ['::a9fe:a9fe', 'link-local'],
    // IPv4-translated (RFC 6145), NAT64 well-known prefix (RFC 6052), 6to4 (RFC 3056).
    ['::ffff:0:7f00:1', 'loopback'],
    ['64:ff9b::a9fe:a9fe', 'link-local'],
    ['64:ff9b::127.0.0.1', 'loopback'],
    ['64:ff9b::c0a8:101', 'private'],
    ['2002:7f00:1::1', 'loopback'],
    ['2002:a9fe:a9fe::', 'link-local'],
  ])('%s, an IPv6 address carrying an IPv4 one, is judged by it (%s)', (address, why) => {
    expect(refusedAddress(address)).toBe(`${why}, carried in IPv6`);
  });

  it.each([
    '8.8.8.8',
    '1.1.1.1',
    '172.32.0.1',
    '100.128.0.1',
    '2606:4700:4700::1111',
    '::ffff:8.8.8.8',
    '64:ff9b::808:808',
    '2002:808:808::1',
    'example.org',
  ])('lets %s through', (address) => {
    expect(refusedAddress(address)).toBeNull();
  });
});

// The WHATWG URL parser (which Node's URL follows) reads decimal, octal, hexadecimal and
// short IPv4 forms as the dotted address, and writes IPv6 hosts in compressed hexadecimal.
const HOSTILE_URLS = [
  'http://127.0.0.1/',
  'http://2130706433/',
  'http://0x7f000001/',
  'http://0x7f.0.0.1/',
  'http://0177.0.0.1/',
  'http://017700000001/',
  'http://127.1/',
  'http://127.0.1/',
  'http://[::1]/',
  'http://[::ffff:127.0.0.1]/',
  'http://[::ffff:7f00:1]/',
  'http://[0:0:0:0:0:ffff:127.0.0.1]/',
  'http://[::7f00:1]/',
  'http://[::ffff:0:7f00:1]/',
  'http://169.254.169.254/latest/meta-data/',
  'http://2852039166/',
  'http://0xa9fea9fe/',
  'http://0251.0376.0251.0376/',
  'http://[::ffff:169.254.169.254]/',
  'http://[64:ff9b::a9fe:a9fe]/',
  'http://[2002:a9fe:a9fe::1]/',
  'http://10.0.0.1/',
  'http://0xa.1/',
  'http://192.168.0.1:8080/',
  'http://[fd00::1]/',
  'http://[fe80::1]/',
  'http://0/',
];

describe('URLs a feed or webhook may not name', () => {
  const guard = new NetworkGuard({});
  it.each(HOSTILE_URLS)('refuses %s', (url) => {
    expect(() => guard.checkUrl(new URL(url))).toThrow(expect.objectContaining({ code: 'STRAND_SOURCE_FORBIDDEN' }));
  });

  it.each(HOSTILE_URLS)('refuses %s as a webhook target when the configuration loads', (url) => {
    const subscribers = [{ name: 'x', url: `${url}hook`, secret: 'whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw' }];
    expect(() => parseConfig({ webhooks: { subscribers } })).toThrow(
      /webhook targets on private networks are called only with webhooks.allowPrivateNetworks/,
    );
  });

  it('says which switches open the way, for feeds and for webhook targets', () => {
    expect(() => new NetworkGuard({}, FEED_NAMES).checkUrl(new URL('http://[::ffff:127.0.0.1]/'))).toThrow(
      '[::ffff:7f00:1] is ::ffff:7f00:1 (loopback, carried in IPv6); feeds on private networks are fetched only with ingest.allowPrivateNetworks or ingest.allowedNetworks',
    );
    expect(() => new NetworkGuard({}, WEBHOOK_NAMES).checkUrl(new URL('http://10.0.0.1/'))).toThrow(
      '10.0.0.1 (private); webhook targets on private networks are called only with webhooks.allowPrivateNetworks or webhooks.allowedNetworks',
    );
  });

  it('lets the operator open one network without opening all of them, in every form of its addresses', () => {
    const narrow = new NetworkGuard({ allowedNetworks: ['10.20.0.0/16', '127.0.0.1'] });
    expect(narrow.refusal('10.20.3.4')).toBeNull();
    expect(narrow.refusal('::ffff:10.20.3.4')).toBeNull();
    expect(narrow.refusal('127.0.0.1')).toBeNull();
    expect(narrow.refusal('127.0.0.2')).toBe('loopback');
    expect(narrow.refusal('10.21.0.1')).toBe('private');
    expect(new NetworkGuard({ allowPrivateNetworks: true }).refusal('169.254.169.254')).toBeNull();
  });

  it('judges a connected socket by the address it actually reached', () => {
    expect(() => guard.checkConnected('feeds.example', { remoteAddress: '::ffff:127.0.0.1' })).toThrow(
      /feeds.example is ::ffff:127.0.0.1 \(loopback, carried in IPv6\)/,
    );
    expect(() => guard.checkConnected('feeds.example', { remoteAddress: '8.8.8.8' })).not.toThrow();
  });

  it('refuses a bad allowedNetworks entry, and a subscriber URL naming a refused address, when the configuration loads', () => {
    expect(() => parseConfig({ ingest: { allowedNetworks: ['10.0.0.0/33'] } })).toThrow(
      /ingest.allowedNetworks: 10.0.0.0\/33 is neither an address nor a CIDR network/,
    );
    const secret = 'whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw';
    for (const url of ['http://169.254.169.254/hook', 'http://[::ffff:127.0.0.1]:9/hook', 'http://2130706433/hook']) {
      expect(() => parseConfig({ webhooks: { subscribers: [{ name: 'x', url, secret }] } })).toThrow(
        /webhooks.subscribers.0.url: .*webhook targets on private networks are called only with webhooks.allowPrivateNetworks/,
      );
    }
    expect(
      parseConfig({ webhooks: { allowedNetworks: ['127.0.0.1'], subscribers: [{ name: 'x', url: 'http://127.0.0.1:9/hook', secret }] } })
        .webhooks.subscribers,
    ).toHaveLength(1);
  });
});

describe('fetching from private addresses', () => {
  let server: Server;
  let port: number;
  const feed =
    '{"version": "https://jsonfeed.org/version/1.1", "title": "Local", "items": [{"id": "1", "content_text": "The levee failed."}]}';
  const page = `<html><body><article><h1>Levee</h1>${'<p>The levee at Korrin Bay failed overnight and water reached the lower town before dawn. </p>'.repeat(6)}</article></body></html>`;
  beforeAll(async () => {
    server = createServer((req, res) => {
      const to = /^\/to\/(.+)$/.exec(req.url ?? '')?.[1];
      if (to) return void res.writeHead(302, { location: decodeURIComponent(to).replace('PORT', String(port)) }).end();
      if (req.url === '/hop') return void res.writeHead(302, { location: `http://127.0.0.1:${port}/feed.json` }).end();
      if (req.url === '/loop') return void res.writeHead(302, { location: '/loop' }).end();
      if (req.url === '/page') return void res.writeHead(200, { 'content-type': 'text/html' }).end(page);
      res.writeHead(200, { 'content-type': 'application/feed+json' }).end(feed);
    });
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
    port = (server.address() as AddressInfo).port;
  });
  afterAll(() => new Promise((r) => server.close(r)));

  const limits = { maxFeedBytes: 1 << 20, maxArticleChars: 10_000, fetchTimeoutMs: 5000 };

  it.each([
    ['a loopback address in the URL', () => `http://127.0.0.1:${port}/feed.json`],
    ['an IPv6 loopback address in the URL', () => `http://[::1]:${port}/feed.json`],
    ['an IPv4 address written in hexadecimal', () => `http://0x7f000001:${port}/feed.json`],
    ['an IPv4-mapped IPv6 address', () => `http://[::ffff:127.0.0.1]:${port}/feed.json`],
    ['a name that resolves to loopback', () => `http://localhost:${port}/feed.json`],
  ])('refuses %s, saying why, unless ingest.allowPrivateNetworks', async (_name, url) => {
    const doc = await readFeedDocument(url(), limits);
    expect(doc.articles).toEqual([]);
    expect(doc.problems).toEqual([
      expect.objectContaining({
        code: 'STRAND_SOURCE_FORBIDDEN',
        message: expect.stringMatching(
          /\(loopback(, carried in IPv6)?\); feeds on private networks are fetched only with ingest.allowPrivateNetworks/,
        ),
      }),
    ]);
  });

  it('refuses the same addresses for an article page (full text)', async () => {
    await expect(fetchFullText(`http://[::ffff:127.0.0.1]:${port}/page`, limits)).rejects.toMatchObject({
      code: 'STRAND_SOURCE_FORBIDDEN',
    });
    await expect(fetchFullText(`http://127.0.0.1:${port}/page`, { ...limits, allowedNetworks: ['127.0.0.1'] })).resolves.toMatch(
      /The levee at Korrin Bay failed/,
    );
  });

  // The first hop is allowed (the operator opened 127.0.0.1 alone); every target is not.
  it.each([
    'http://127.0.0.2:PORT/feed.json',
    'http://2130706434:PORT/feed.json',
    'http://0x7f.0.0.2:PORT/feed.json',
    'http://0177.0.0.2:PORT/feed.json',
    'http://127.2:PORT/feed.json',
    'http://[::ffff:127.0.0.2]:PORT/feed.json',
    'http://[::ffff:7f00:2]:PORT/feed.json',
    'http://[::7f00:2]:PORT/feed.json',
    'http://[::ffff:0:7f00:2]:PORT/feed.json',
    'http://[64:ff9b::7f00:2]:PORT/feed.json',
    'http://[2002:7f00:2::1]:PORT/feed.json',
    'http://[::1]:PORT/feed.json',
    'http://169.254.169.254/latest/meta-data/',
    'http://[::ffff:169.254.169.254]/',
    'http://[64:ff9b::a9fe:a9fe]/',
    'http://10.0.0.1/',
    'http://[fe80::1]/',
  ])('refuses a redirect to %s, for feeds and article pages', async (target) => {
    const url = `http://127.0.0.1:${port}/to/${encodeURIComponent(target)}`;
    const narrow = { ...limits, allowedNetworks: ['127.0.0.1'] };
    await expect(fetchFeed(url, narrow)).rejects.toMatchObject({ code: 'STRAND_SOURCE_FORBIDDEN' });
    await expect(fetchFullText(url, narrow)).rejects.toMatchObject({ code: 'STRAND_SOURCE_FORBIDDEN' });
  });

  // A resolver that answers what an attacker's DNS would.
  const answers: Record<string, LookupAddress[]> = {
    'metadata.attacker.example': [{ address: '169.254.169.254', family: 4 }],
    'intranet.attacker.example': [{ address: '10.0.0.7', family: 4 }],
    'mapped.attacker.example': [{ address: '::ffff:127.0.0.1', family: 6 }],
    'nat64.attacker.example': [{ address: '64:ff9b::7f00:1', family: 6 }],
    'mixed.attacker.example': [
      { address: '8.8.8.8', family: 4 },
      { address: '127.0.0.1', family: 4 },
    ],
    'other-loopback.attacker.example': [{ address: '::ffff:127.0.0.2', family: 6 }],
    'other-mixed.attacker.example': [
      { address: '8.8.8.8', family: 4 },
      { address: '127.0.0.2', family: 4 },
    ],
  };
  const resolve = ((host: string, _o: unknown, cb: (err: Error | null, a: LookupAddress[]) => void) => {
    const a = answers[host];
    if (a) cb(null, a);
    else cb(Object.assign(new Error(`getaddrinfo ENOTFOUND ${host}`), { code: 'ENOTFOUND' }), []);
  }) as unknown as typeof import('node:dns').lookup;

  it.each(Object.keys(answers))('refuses %s, a name resolving to a refused address (any one of its answers)', async (host) => {
    const agent = new NetworkGuard({}).agent(resolve);
    try {
      await expect(fetchFeed(`http://${host}:${port}/feed.json`, limits, {}, agent)).rejects.toMatchObject({
        code: 'STRAND_SOURCE_FORBIDDEN',
        message: expect.stringContaining(`${host} is `),
      });
    } finally {
      await agent.close();
    }
  });

  // With 127.0.0.1 opened by the operator, only names answering other addresses are refused.
  it.each(['metadata', 'intranet', 'other-loopback', 'other-mixed'].map((n) => `${n}.attacker.example`))(
    'refuses a redirect to %s',
    async (host) => {
      const agent = new NetworkGuard({ allowedNetworks: ['127.0.0.1'] }).agent(resolve);
      try {
        const url = `http://127.0.0.1:${port}/to/${encodeURIComponent(`http://${host}:PORT/feed.json`)}`;
        await expect(fetchFeed(url, { ...limits, allowedNetworks: ['127.0.0.1'] }, {}, agent)).rejects.toMatchObject({
          code: 'STRAND_SOURCE_FORBIDDEN',
        });
      } finally {
        await agent.close();
      }
    },
  );

  it('reads them when the operator allows private networks, following redirects', async () => {
    const doc = await readFeedDocument(`http://localhost:${port}/hop`, { ...limits, allowPrivateNetworks: true });
    expect(doc.problems).toEqual([]);
    expect(doc.articles).toHaveLength(1);
  });

  it('stops after ingest.maxRedirects', async () => {
    const doc = await readFeedDocument(`http://127.0.0.1:${port}/loop`, { ...limits, allowPrivateNetworks: true, maxRedirects: 3 });
    expect(doc.problems[0]).toMatchObject({
      code: 'STRAND_SOURCE_UNREADABLE',
      message: expect.stringMatching(/redirects more than ingest.maxRedirects \(3\)/),
    });
  });
});

describe('strandline ingest of an address it may not fetch', () => {
  it('refuses an IPv4-mapped loopback URL, stores nothing, and exits 1', async () => {
    const out: string[] = [];
    const write = vi.spyOn(process.stdout, 'write').mockImplementation((s) => void out.push(String(s)) as never);
    const err = vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
    try {
      const db = join(mkdtempSync(join(tmpdir(), 'strandline-guard-')), 'x.sqlite');
      const code = await replayCommand(['http://[::ffff:127.0.0.1]:9/feed.xml'], { db, json: true, logLevel: 'silent' });
      expect(code).toBe(1);
      const summary = JSON.parse(out.join(''));
      expect(summary).toMatchObject({
        files: 0,
        stored: 0,
        problems: [{ code: 'STRAND_SOURCE_FORBIDDEN', message: expect.stringMatching(/loopback, carried in IPv6/) }],
      });
    } finally {
      write.mockRestore();
      err.mockRestore();
    }
  });
});
