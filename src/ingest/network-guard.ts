/**
 * Refuses feed fetches that would reach the machine itself or a private network (server-side
 * request forgery) unless the operator allows it (`ingest.allowPrivateNetworks`). Every
 * connection's address is checked when it is resolved (the HTTP agent's DNS lookup), so a
 * name that resolves differently the second time cannot slip through; addresses written in
 * the URL itself are checked before each request and each redirect.
 *
 * The ranges are the IANA special-purpose address registries (RFC 6890 and its updates:
 * RFC 6598 shared address space, RFC 4193 unique local, RFC 4291 link-local and
 * multicast), kept in Node's built-in BlockList.
 */
import { type LookupAddress, type LookupAllOptions, type LookupOneOptions, lookup as dnsLookup } from 'node:dns';
import { BlockList, isIP } from 'node:net';
import { Agent } from 'undici';
import { StrandError } from '../errors.js';

const RANGES: readonly [string, number, 'ipv4' | 'ipv6', string][] = [
  ['0.0.0.0', 8, 'ipv4', '"this network"'],
  ['10.0.0.0', 8, 'ipv4', 'private'],
  ['100.64.0.0', 10, 'ipv4', 'shared address space'],
  ['127.0.0.0', 8, 'ipv4', 'loopback'],
  ['169.254.0.0', 16, 'ipv4', 'link-local'],
  ['172.16.0.0', 12, 'ipv4', 'private'],
  ['192.0.0.0', 24, 'ipv4', 'IETF protocol assignments'],
  ['192.0.2.0', 24, 'ipv4', 'documentation'],
  ['192.168.0.0', 16, 'ipv4', 'private'],
  ['198.18.0.0', 15, 'ipv4', 'benchmarking'],
  ['198.51.100.0', 24, 'ipv4', 'documentation'],
  ['203.0.113.0', 24, 'ipv4', 'documentation'],
  ['224.0.0.0', 4, 'ipv4', 'multicast'],
  ['240.0.0.0', 4, 'ipv4', 'reserved'],
  ['::', 128, 'ipv6', 'unspecified'],
  ['::1', 128, 'ipv6', 'loopback'],
  ['64:ff9b:1::', 48, 'ipv6', 'local-use translation'],
  ['100::', 64, 'ipv6', 'discard-only'],
  ['2001:db8::', 32, 'ipv6', 'documentation'],
  ['fc00::', 7, 'ipv6', 'unique local'],
  ['fe80::', 10, 'ipv6', 'link-local'],
  ['ff00::', 8, 'ipv6', 'multicast'],
];

const blocked = RANGES.map(([net, prefix, type, label]) => {
  const list = new BlockList();
  list.addSubnet(net, prefix, type);
  return { list, type, label };
});

/** Why an address may not be fetched without permission, or null when it is public. */
export function refusedAddress(address: string): string | null {
  const family = isIP(address);
  if (family === 0) return null;
  // An IPv4 address written as IPv6 (::ffff:127.0.0.1) is judged as the IPv4 address.
  const mapped = /^::ffff:(\d+\.\d+\.\d+\.\d+)$/i.exec(address)?.[1];
  if (mapped) return refusedAddress(mapped);
  const type = family === 4 ? 'ipv4' : 'ipv6';
  return blocked.find((b) => b.type === type && b.list.check(address, type))?.label ?? null;
}

function forbidden(host: string, address: string, why: string): StrandError {
  return new StrandError('STRAND_SOURCE_FORBIDDEN', `${host} is ${address} (${why}); feeds on private networks are fetched only with ingest.allowPrivateNetworks`);
}

/** Throws STRAND_SOURCE_FORBIDDEN when the URL names a refused address literally. */
export function checkUrlHost(url: URL, allowPrivate: boolean): void {
  if (allowPrivate) return;
  const host = url.hostname.replace(/^\[|\]$/g, '');
  const why = refusedAddress(host);
  if (why) throw forbidden(url.hostname, host, why);
}

type LookupCallback = (err: NodeJS.ErrnoException | null, address: string | LookupAddress[], family?: number) => void;

/** An HTTP agent whose every connection is refused when its name resolves to a refused address. */
export function guardedAgent(allowPrivate: boolean): Agent {
  const lookup = (host: string, options: LookupOneOptions | LookupAllOptions, callback: LookupCallback): void => {
    dnsLookup(host, { ...options, all: true }, (err, addresses) => {
      if (err) return callback(err, []);
      if (!allowPrivate) {
        for (const a of addresses) {
          const why = refusedAddress(a.address);
          if (why) return callback(forbidden(host, a.address, why) as unknown as NodeJS.ErrnoException, []);
        }
      }
      if ((options as LookupAllOptions).all) return callback(null, addresses);
      const first = addresses[0]!;
      return callback(null, first.address, first.family);
    });
  };
  return new Agent({ connect: { lookup: lookup as never } });
}
