// Outbound URL policy for sourceUrl and callbackUrl: http(s) only, and no private, loopback,
// link-local or otherwise internal addresses unless the allowlist names the host or a CIDR.
// The check runs inside the socket's DNS lookup, so the address checked is the address used
// (no gap for DNS rebinding between check and connect).

import { lookup as dnsLookup } from 'node:dns';
import { BlockList, isIP, type LookupFunction } from 'node:net';
import { EarmarkError } from '../errors/index.ts';

const denied = new BlockList();
for (const [net, bits] of [
  ['0.0.0.0', 8], ['10.0.0.0', 8], ['100.64.0.0', 10], ['127.0.0.0', 8], ['169.254.0.0', 16], ['172.16.0.0', 12],
  ['192.0.0.0', 24], ['192.168.0.0', 16], ['198.18.0.0', 15], ['224.0.0.0', 4], ['240.0.0.0', 4],
] as const) denied.addSubnet(net, bits, 'ipv4');
for (const [net, bits] of [['::', 128], ['::1', 128], ['fc00::', 7], ['fe80::', 10], ['ff00::', 8], ['64:ff9b::', 96]] as const) denied.addSubnet(net, bits, 'ipv6');

export class UrlPolicy {
  private readonly allowedHosts = new Set<string>();
  private readonly allowedNets = new BlockList();

  constructor(allowlist: string[]) {
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
    if (url.protocol !== 'http:' && url.protocol !== 'https:') throw new EarmarkError('source_refused', `${field} must use http or https`, { field });
    if (url.username || url.password) throw new EarmarkError('source_refused', `${field} must not carry credentials`, { field });
    return url;
  }

  addressAllowed(address: string, hostname: string): boolean {
    if (this.allowedHosts.has(hostname.toLowerCase().replace(/^\[|\]$/g, ''))) return true;
    const mapped = /^::ffff:(\d+\.\d+\.\d+\.\d+)$/i.exec(address)?.[1];
    const plain = mapped ?? address;
    const type = isIP(plain) === 6 ? 'ipv6' : 'ipv4';
    if (this.allowedNets.check(plain, type)) return true;
    return !denied.check(plain, type);
  }

  /** A dns lookup for http.request that refuses internal addresses for this hostname. */
  lookupFor(hostname: string, field: string): LookupFunction {
    return (host, options, callback) => {
      dnsLookup(host, { ...options, all: true }, (error, addresses) => {
        if (error) return callback(error, '', 4);
        const list = addresses as unknown as Array<{ address: string; family: number }>;
        const bad = list.find((a) => !this.addressAllowed(a.address, hostname));
        if (bad || list.length === 0) {
          return callback(new EarmarkError('source_refused', `${field} resolves to an address that is not allowed`, { field }), '', 4);
        }
        if ((options as { all?: boolean }).all) return (callback as unknown as (e: null, a: typeof list) => void)(null, list);
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
