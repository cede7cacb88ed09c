/**
 * Refuses outgoing requests (feeds, linked article pages, webhook deliveries) that would
 * reach the machine itself or a private network (server-side request forgery), unless the
 * operator allows it: all such networks with the `allowPrivateNetworks` switch, or a few
 * named ones with `allowedNetworks`.
 *
 * Addresses are classified by ipaddr.js, whose ranges follow the IANA special-purpose
 * address registries (RFC 6890 and its updates). Only globally routable unicast passes.
 * An IPv6 address that carries an IPv4 address is judged by the IPv4 address it carries:
 * IPv4-mapped (`::ffff:a.b.c.d`, RFC 4291 §2.5.5.2), IPv4-compatible (`::a.b.c.d`, RFC 4291
 * §2.5.5.1, deprecated), IPv4-translated (`::ffff:0:a.b.c.d`, RFC 6145), the NAT64
 * well-known prefix (`64:ff9b::/96`, RFC 6052) and 6to4 (`2002::/16`, RFC 3056); hand-written
 * prefixes missed these forms once, so nothing here matches address text.
 *
 * Three checks, so that no path slips past: the URL's host when it is an address (before
 * any connection), every address a name resolves to (the connection then uses exactly
 * those, so a DNS answer cannot change between check and connect), and the address the
 * socket actually connected to.
 */
import { type LookupAddress, type LookupAllOptions, type LookupOneOptions, lookup as dnsLookup } from 'node:dns';
import type { Socket } from 'node:net';
import ipaddr from 'ipaddr.js';
import { Agent, buildConnector } from 'undici';
import { StrandError } from '../errors.js';

/** What an outgoing request may reach beyond the public internet. */
export interface NetworkPolicy {
  /** Every loopback, private, link-local and other special-purpose network (default false). */
  allowPrivateNetworks?: boolean;
  /** Networks allowed even so, as CIDR (`10.20.0.0/16`) or single addresses (default none). */
  allowedNetworks?: readonly string[];
}

/** Who is refused, for the message: which kind of request and which options open it. */
export interface PolicyNames {
  /** "feeds on private networks are fetched" */
  what: string;
  /** "ingest" or "webhooks": the configuration section holding the switches. */
  section: string;
}

/** The names used for feed and page fetches. */
export const FEED_NAMES: PolicyNames = { what: 'feeds on private networks are fetched', section: 'ingest' };
/** The names used for webhook deliveries. */
export const WEBHOOK_NAMES: PolicyNames = { what: 'webhook targets on private networks are called', section: 'webhooks' };

type Ip = ipaddr.IPv4 | ipaddr.IPv6;

/** Readable names of ipaddr.js's ranges, with the RFC that reserves each. */
const RANGE_NAMES: Record<string, string> = {
  unspecified: 'unspecified',
  broadcast: 'broadcast',
  multicast: 'multicast',
  linkLocal: 'link-local',
  loopback: 'loopback',
  carrierGradeNat: 'shared address space, RFC 6598',
  private: 'private',
  reserved: 'reserved or documentation',
  as112: 'AS112 DNS',
  amt: 'AMT relay',
  benchmarking: 'benchmarking',
  uniqueLocal: 'unique local',
  deprecatedSiteLocal: 'site-local',
  discard: 'discard-only',
  teredo: 'Teredo tunnel',
  as112v6: 'AS112 DNS',
  deprecatedOrchid: 'ORCHID',
  orchid2: 'ORCHID',
  droneRemoteIdProtocolEntityTags: 'DRIP entity tag',
  segmentRouting: 'segment routing',
  rfc6052: 'local-use IPv4/IPv6 translation, RFC 8215',
};

/** The IPv4 address an IPv6 address carries (mapped, translated, compatible, NAT64, 6to4), or null. */
function embeddedIPv4(ip: ipaddr.IPv6): ipaddr.IPv4 | null {
  const p = ip.parts;
  const low = (hi: number, lo: number): ipaddr.IPv4 => new ipaddr.IPv4([hi >> 8, hi & 0xff, lo >> 8, lo & 0xff]);
  const range = ip.range();
  if (range === 'ipv4Mapped') return ip.toIPv4Address();
  // ::ffff:0:a.b.c.d (RFC 6145) and 64:ff9b::a.b.c.d (RFC 6052 well-known prefix, /96 only).
  if (range === 'rfc6145' || (range === 'rfc6052' && p[2] === 0)) return low(p[6]!, p[7]!);
  // 2002:AABB:CCDD::/48 routes to the 6to4 relay of AA.BB.CC.DD.
  if (range === '6to4') return low(p[1]!, p[2]!);
  // ::a.b.c.d, IPv4-compatible (deprecated); :: and ::1 are judged as themselves.
  if (p.slice(0, 6).every((x) => x === 0) && (p[6]! !== 0 || p[7]! > 1)) return low(p[6]!, p[7]!);
  return null;
}

/** Parses an address as written in a URL host or by a resolver; null when it is a name. */
function parseAddress(address: string): Ip | null {
  const bare = address.replace(/^\[|\]$/g, '');
  if (!ipaddr.isValid(bare)) return null;
  try {
    return ipaddr.parse(bare);
  } catch {
    return null;
  }
}

/** Why an address may not be reached without permission, or null when it is public (or a name). */
export function refusedAddress(address: string): string | null {
  const ip = parseAddress(address);
  return ip ? refusedIp(ip) : null;
}

function refusedIp(ip: Ip): string | null {
  if (ip.kind() === 'ipv6') {
    const inner = embeddedIPv4(ip as ipaddr.IPv6);
    if (inner) {
      const why = refusedIp(inner);
      return why && `${why}, carried in IPv6`;
    }
  }
  const range = ip.range();
  return range === 'unicast' ? null : (RANGE_NAMES[range] ?? range);
}

/** Parses `allowedNetworks` entries; throws a plain Error naming the first bad one (config validation words it). */
export function parseNetworks(list: readonly string[]): [Ip, number][] {
  return list.map((entry) => {
    if (ipaddr.isValidCIDR(entry)) return ipaddr.parseCIDR(entry);
    const ip = parseAddress(entry);
    if (!ip) throw new Error(`${entry} is neither an address nor a CIDR network`);
    return [ip, ip.kind() === 'ipv4' ? 32 : 128];
  });
}

/** The checks one policy makes, built once (the allowed networks parsed once). */
export class NetworkGuard {
  private readonly allowed: [Ip, number][];

  constructor(
    private readonly policy: NetworkPolicy,
    private readonly names: PolicyNames = FEED_NAMES,
  ) {
    this.allowed = parseNetworks(policy.allowedNetworks ?? []);
  }

  /** Why this address is refused under the policy, or null. Names are not judged here. */
  refusal(address: string): string | null {
    if (this.policy.allowPrivateNetworks) return null;
    const ip = parseAddress(address);
    if (!ip) return null;
    const why = refusedIp(ip);
    if (why === null || this.isAllowed(ip)) return null;
    return why;
  }

  private isAllowed(ip: Ip): boolean {
    const forms: Ip[] = [ip];
    const inner = ip.kind() === 'ipv6' ? embeddedIPv4(ip as ipaddr.IPv6) : null;
    if (inner) forms.push(inner);
    return this.allowed.some(([net, bits]) => forms.some((f) => f.kind() === net.kind() && f.match(net, bits)));
  }

  /** The error for a refused address. */
  forbidden(host: string, address: string, why: string): StrandError {
    const shown = host === address ? host : `${host} is ${address}`;
    return new StrandError(
      'STRAND_SOURCE_FORBIDDEN',
      `${shown} (${why}); ${this.names.what} only with ${this.names.section}.allowPrivateNetworks or ${this.names.section}.allowedNetworks`,
    );
  }

  /** Throws STRAND_SOURCE_FORBIDDEN when the URL names a refused address literally. */
  checkUrl(url: URL): void {
    const host = url.hostname.replace(/^\[|\]$/g, '');
    const why = this.refusal(host);
    if (why) throw this.forbidden(url.hostname, host, why);
  }

  /** Throws STRAND_SOURCE_FORBIDDEN when a connected socket's peer is a refused address. */
  checkConnected(host: string, socket: Pick<Socket, 'remoteAddress'>): void {
    const address = socket.remoteAddress;
    // A socket that closed before it was handed on has no address; its request fails anyway.
    if (!address) return;
    const why = this.refusal(address);
    if (why) throw this.forbidden(host, address, why);
  }

  /**
   * An HTTP agent that refuses a connection to a refused address: a literal host before
   * connecting, a name when any address it resolves to is refused (connections use those
   * addresses), and every socket by the address it actually reached.
   */
  agent(resolve: typeof dnsLookup = dnsLookup): Agent {
    const lookup = (host: string, options: LookupOneOptions | LookupAllOptions, callback: LookupCallback): void => {
      resolve(host, { ...options, all: true }, (err, addresses) => {
        if (err) return callback(err, []);
        for (const a of addresses) {
          const why = this.refusal(a.address);
          if (why) return callback(this.forbidden(host, a.address, why) as unknown as NodeJS.ErrnoException, []);
        }
        if ((options as LookupAllOptions).all) return callback(null, addresses);
        const first = addresses[0]!;
        return callback(null, first.address, first.family);
      });
    };
    const connect = buildConnector({ lookup: lookup as never } as buildConnector.BuildOptions);
    return new Agent({
      connect: (opts, callback) => {
        const literal = opts.hostname.replace(/^\[|\]$/g, '');
        const early = this.refusal(literal);
        if (early) return void callback(this.forbidden(opts.hostname, literal, early), null);
        connect(opts, (err, socket) => {
          if (err || !socket) return void callback(err ?? new Error('no socket'), null);
          try {
            this.checkConnected(opts.hostname, socket);
          } catch (refused) {
            socket.destroy();
            return void callback(refused as Error, null);
          }
          callback(null, socket);
        });
      },
    });
  }
}

type LookupCallback = (err: NodeJS.ErrnoException | null, address: string | LookupAddress[], family?: number) => void;
