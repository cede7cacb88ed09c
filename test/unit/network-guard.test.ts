import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFeedDocument } from '../../src/ingest/read-source.js';
import { refusedAddress } from '../../src/ingest/network-guard.js';

// Address ranges from the IANA IPv4 and IPv6 Special-Purpose Address Registries (RFC 6890,
// RFC 6598, RFC 4193, RFC 4291); public examples are well-known public resolvers' addresses.
describe('addresses a feed fetch refuses without permission', () => {
  it.each([
    ['127.0.0.1', 'loopback'], ['127.255.0.9', 'loopback'], ['10.1.2.3', 'private'], ['172.16.0.1', 'private'], ['172.31.255.255', 'private'],
    ['192.168.1.1', 'private'], ['169.254.169.254', 'link-local'], ['100.64.0.1', 'shared address space'], ['0.0.0.0', '"this network"'],
    ['224.0.0.251', 'multicast'], ['::1', 'loopback'], ['::', 'unspecified'], ['fe80::1', 'link-local'], ['fd12:3456::1', 'unique local'],
    ['::ffff:127.0.0.1', 'loopback'], ['::ffff:10.0.0.1', 'private'], ['2001:db8::1', 'documentation'],
  ])('%s (%s)', (address, why) => {
    expect(refusedAddress(address)).toBe(why);
  });

  it.each(['8.8.8.8', '1.1.1.1', '172.32.0.1', '100.128.0.1', '2606:4700:4700::1111', 'example.org'])('lets %s through', (address) => {
    expect(refusedAddress(address)).toBeNull();
  });
});

describe('fetching feeds from private addresses', () => {
  let server: Server;
  let port: number;
  const feed = '{"version": "https://jsonfeed.org/version/1.1", "title": "Local", "items": [{"id": "1", "content_text": "The levee failed."}]}';
  beforeAll(async () => {
    server = createServer((req, res) => {
      if (req.url === '/hop') return void res.writeHead(302, { location: `http://127.0.0.1:${port}/feed.json` }).end();
      if (req.url === '/loop') return void res.writeHead(302, { location: '/loop' }).end();
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
    ['a name that resolves to loopback', () => `http://localhost:${port}/feed.json`],
  ])('refuses %s, saying why, unless ingest.allowPrivateNetworks', async (_name, url) => {
    const doc = await readFeedDocument(url(), limits);
    expect(doc.articles).toEqual([]);
    expect(doc.problems).toEqual([expect.objectContaining({ code: 'STRAND_SOURCE_FORBIDDEN', message: expect.stringMatching(/\(loopback\); feeds on private networks are fetched only with ingest.allowPrivateNetworks/) })]);
  });

  it('reads them when the operator allows private networks, following redirects', async () => {
    const doc = await readFeedDocument(`http://localhost:${port}/hop`, { ...limits, allowPrivateNetworks: true });
    expect(doc.problems).toEqual([]);
    expect(doc.articles).toHaveLength(1);
  });

  it('stops after ingest.maxRedirects', async () => {
    const doc = await readFeedDocument(`http://127.0.0.1:${port}/loop`, { ...limits, allowPrivateNetworks: true, maxRedirects: 3 });
    expect(doc.problems[0]).toMatchObject({ code: 'STRAND_SOURCE_UNREADABLE', message: expect.stringMatching(/redirects more than ingest.maxRedirects \(3\)/) });
  });
});
