// Outbound URL policy for sourceUrl and callbackUrl: http(s) only, and no special-purpose
// address (private, loopback, link-local, documentation, translation prefixes...) unless the
// allowlist names the host or a CIDR. The check runs inside the socket's DNS lookup, so the
// address checked is the address used (no gap for DNS rebinding between check and connect).

import { lookup as dnsLookup, type LookupAddress } from 'node:dns';
import { BlockList, isIP, type LookupFunction } from 'node:net';
import ipaddr from 'ipaddr.js';
import { EarmarkError } from '../errors/index.ts';

/**
 * Source of truth: ipaddr.js's range() table (its SpecialRanges follow the IANA IPv4 and IPv6
 * Special-Purpose Address Registries, RFC 6890 and updates, with each block's RFC beside it);
 * anything it does not call 'unicast' is refused. It misses two things, added here:
 * - IPv6 outside 2000::/3, the only global unicast space (RFC 4291 s2.4, IANA IPv6 Address
 *   Space): covers ::/96 IPv4-compatible (RFC 4291 s2.5.5.1), which ipaddr.js calls unicast,
 *   and 100:0:0:1::/64 (RFC 9780, from memory), which it does not list.
 * - ipaddr.js parses "::a.b.c.d" as ::ffff:a.b.c.d, so IPv6 is first put in canonical form.
 * IPv4-mapped ::ffff:0:0/96 is judged by its IPv4 (that is where the socket goes); every other
 * prefix that embeds an IPv4 (::ffff:0:0:0/96, 64:ff9b::/96, 64:ff9b:1::/48, 2002::/16,
 * 2001::/32) is refused whole.
 */
const GLOBAL_UNICAST_V6 = ipaddr.IPv6.parse('2000::');

/** The address in a form ipaddr.js reads right, or null when it is not an IP address. */
function parseAddress(raw: string): ipaddr.IPv4 | ipaddr.IPv6 | null {
  const address = raw.replace(/^\[|\]$/g, '').replace(/%.*$/, '');
  const family = isIP(address);
  if (family === 4) return ipaddr.IPv4.isValidFourPartDecimal(address) ? ipaddr.IPv4.parse(address) : null;
  if (family !== 6) return null;
  try {
    // The WHATWG URL serializer writes IPv6 as eight hex groups, never a dotted quad.
    const parsed = ipaddr.IPv6.parse(new URL(`http://[${address}]/`).hostname.slice(1, -1));
    return parsed.isIPv4MappedAddress() ? parsed.toIPv4Address() : parsed;
  } catch {
    return null;
  }
}

/** True for an address in a special-purpose block (or one that does not parse: fail closed). */
export function isSpecialPurpose(raw: string): boolean {
  const ip = parseAddress(raw);
  if (!ip) return true;
  if (ip.kind() === 'ipv6' && !(ip as ipaddr.IPv6).match(GLOBAL_UNICAST_V6, 3)) return true;
  return ip.range() !== 'unicast';
}

/** dns.lookup's shape with all: true; tests inject their own answers. */
export type Resolver = (
  host: string,
  callback: (error: NodeJS.ErrnoException | null, addresses: LookupAddress[]) => void,
) => void;

const systemResolver: Resolver = (host, callback) => dnsLookup(host, { all: true }, callback);

export class UrlPolicy {
  private readonly allowedHosts = new Set<string>();
  private readonly allowedNets = new BlockList();

  constructor(
    allowlist: string[],
    private readonly resolve: Resolver = systemResolver,
  ) {
    for (const entry of allowlist) {
      const [addr, bits] = entry.split('/');
      const family = isIP(addr);
      if (family === 0) this.allowedHosts.add(entry.toLowerCase());
      else if (bits === undefined) this.allowedNets.addAddress(addr, family === 4 ? 'ipv4' : 'ipv6');
      else this.allowedNets.addSubnet(addr, Number(bits), family === 4 ? 'ipv4' : 'ipv6');
    }
  }

  /** Syntax and scheme; the address is checked at connect time by lookupFor(). */
  parse(raw: string, field: string): URL {
    let url: URL;
    try {
      url = new URL(raw);
    } catch {
      throw new EarmarkError('source_refused', `${field} is not a valid URL`, { field });
    }
    if (url.protocol !== 'http:' && url.protocol !== 'https:')
      throw new EarmarkError('source_refused', `${field} must use http or https`, { field });
    if (url.username || url.password)
      throw new EarmarkError('source_refused', `${field} must not carry credentials`, { field });
    return url;
  }

  addressAllowed(address: string, hostname: string): boolean {
    if (this.allowedHosts.has(hostname.toLowerCase().replace(/^\[|\]$/g, ''))) return true;
    const ip = parseAddress(address);
    if (!ip) return false;
    const plain = ip.toString();
    if (this.allowedNets.check(plain, ip.kind())) return true;
    return !isSpecialPurpose(plain);
  }

  /** A dns lookup for http.request that refuses disallowed addresses for this hostname. */
  lookupFor(hostname: string, field: string): LookupFunction {
    return (host, options, callback) => {
      // A literal address needs no resolver (and must not depend on one).
      const literal = host.replace(/^\[|\]$/g, '');
      const family = isIP(literal);
      const resolve: Resolver = family ? (_h, cb) => cb(null, [{ address: literal, family }]) : this.resolve;
      resolve(host, (error, list) => {
        if (error) return callback(error, '', 4);
        const bad = list.find((a) => !this.addressAllowed(a.address, hostname));
        if (bad || list.length === 0) {
          return callback(
            new EarmarkError('source_refused', `${field} resolves to an address that is not allowed`, { field }),
            '',
            4,
          );
        }
        if ((options as { all?: boolean }).all)
          return (callback as unknown as (e: null, a: typeof list) => void)(null, list);
        callback(null, list[0].address, list[0].family);
      });
    };
  }

  /** Early check at submit time (the worker checks again at connect). */
  async check(raw: string, field: string): Promise<URL> {
    const url = this.parse(raw, field);
    const host = url.hostname.replace(/^\[|\]$/g, '');
    await new Promise<void>((resolve, reject) => {
      this.lookupFor(url.hostname, field)(host, {}, (error) => (error ? reject(error) : resolve()));
    }).catch((error: unknown) => {
      if (error instanceof EarmarkError) throw error;
      throw new EarmarkError('source_refused', `${field}: the host name does not resolve`, { field });
    });
    return url;
  }
}
