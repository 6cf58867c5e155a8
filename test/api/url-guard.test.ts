// Outbound URL policy. Blocks: the IANA IPv4 and IPv6 Special-Purpose Address Registries
// (RFC 6890 and updates), the RFC beside each case below. Every case is judged in-process:
// literals directly, host names through an injected resolver; nothing connects anywhere.
import { describe, expect, it } from 'vitest';
import { EarmarkError } from '../../src/errors/index.ts';
import { isSpecialPurpose, UrlPolicy, type Resolver } from '../../src/net/url-guard.ts';

// [address, the block and its source]
const REFUSED: Array<[string, string]> = [
  ['0.0.0.0', '0/8 this network, RFC 791 / RFC 1122 s3.2.1.3'],
  ['0.1.2.3', '0/8'],
  ['10.0.0.5', '10/8 private, RFC 1918'],
  ['100.64.0.1', '100.64/10 shared, RFC 6598'],
  ['127.0.0.1', '127/8 loopback, RFC 1122'],
  ['127.255.255.254', '127/8'],
  ['169.254.169.254', '169.254/16 link-local, RFC 3927'],
  ['172.16.3.4', '172.16/12 private, RFC 1918'],
  ['192.0.0.1', '192.0.0/24 IETF protocol assignments, RFC 6890'],
  ['192.0.0.170', '192.0.0.170/32 NAT64 discovery, RFC 7050'],
  ['192.0.2.1', '192.0.2/24 TEST-NET-1, RFC 5737'],
  ['192.31.196.1', '192.31.196/24 AS112, RFC 7535'],
  ['192.52.193.1', '192.52.193/24 AMT, RFC 7450'],
  ['192.88.99.1', '192.88.99/24 6to4 relay anycast, RFC 7526'],
  ['192.168.1.1', '192.168/16 private, RFC 1918'],
  ['192.175.48.1', '192.175.48/24 AS112, RFC 7534'],
  ['198.18.0.1', '198.18/15 benchmarking, RFC 2544'],
  ['198.51.100.7', '198.51.100/24 TEST-NET-2, RFC 5737'],
  ['203.0.113.9', '203.0.113/24 TEST-NET-3, RFC 5737'],
  ['224.0.0.1', '224/4 multicast, RFC 5771'],
  ['240.0.0.1', '240/4 reserved, RFC 1112'],
  ['255.255.255.255', 'limited broadcast, RFC 919'],
  ['::', '::/128 unspecified, RFC 4291'],
  ['::1', '::1/128 loopback, RFC 4291'],
  ['::ffff:127.0.0.1', '::ffff:0:0/96 IPv4-mapped, RFC 4291, judged by its IPv4'],
  ['::ffff:7f00:1', 'the same, hex form'],
  ['::ffff:10.1.2.3', 'mapped private'],
  ['::127.0.0.1', '::/96 IPv4-compatible (deprecated), RFC 4291 s2.5.5.1'],
  ['::7f00:1', 'the same, the form the URL parser writes'],
  ['::8.8.8.8', 'compatible, even with a public IPv4'],
  ['::ffff:0:127.0.0.1', '::ffff:0:0:0/96 IPv4-translated, RFC 6145'],
  ['::ffff:0:808:808', 'translated, even with a public IPv4'],
  ['64:ff9b::7f00:1', '64:ff9b::/96 NAT64 well-known, RFC 6052'],
  ['64:ff9b::8.8.8.8', 'NAT64 well-known, even with a public IPv4'],
  ['64:ff9b:1::a00:1', '64:ff9b:1::/48 NAT64 local-use, RFC 8215'],
  ['100::1', '100::/64 discard-only, RFC 6666'],
  ['100:0:0:1::1', '100:0:0:1::/64 dummy prefix, RFC 9780 (from memory)'],
  ['2001::1', '2001::/32 Teredo, RFC 4380'],
  ['2001:0:4136:e378:8000:63bf:3fff:fdd2', 'Teredo with an embedded address'],
  ['2001:1::1', '2001::/23 IETF protocol assignments, RFC 2928'],
  ['2001:2::1', '2001:2::/48 benchmarking, RFC 5180'],
  ['2001:3::1', '2001:3::/32 AMT, RFC 7450'],
  ['2001:4:112::1', '2001:4:112::/48 AS112-v6, RFC 7535'],
  ['2001:10::1', '2001:10::/28 ORCHID (deprecated), RFC 4843'],
  ['2001:20::1', '2001:20::/28 ORCHIDv2, RFC 7343'],
  ['2001:30::1', '2001:30::/28 DRIP, RFC 9374'],
  ['2001:db8::1', '2001:db8::/32 documentation, RFC 3849'],
  ['2002:7f00:1::1', '2002::/16 6to4 (embeds 127.0.0.1), RFC 3056'],
  ['2002:808:808::1', '6to4, even with a public IPv4'],
  ['2620:4f:8000::1', '2620:4f:8000::/48 AS112 direct delegation, RFC 7534'],
  ['3fff::1', '3fff::/20 documentation, RFC 9637'],
  ['5f00::1', '5f00::/16 SRv6 SIDs, RFC 9602'],
  ['fc00::1', 'fc00::/7 unique local, RFC 4193'],
  ['fd12::1', 'fc00::/7'],
  ['fe80::1', 'fe80::/10 link-local, RFC 4291'],
  ['fe80::1%eth0', 'link-local with a zone'],
  ['fec0::1', 'fec0::/10 site-local (deprecated), RFC 3879'],
  ['ff02::1', 'ff00::/8 multicast, RFC 4291'],
  ['4000::1', 'outside 2000::/3, not global unicast (IANA IPv6 Address Space)'],
  ['not-an-address', 'does not parse: refused'],
];

const PUBLIC = [
  '93.184.216.34',
  '8.8.8.8',
  '172.32.0.1',
  '100.128.0.1',
  '192.0.3.1',
  '198.20.0.1',
  '2001:4860:4860::8888',
  '2a00:1450:4001::1',
  '::ffff:8.8.8.8',
];

describe('special-purpose blocks', () => {
  const policy = new UrlPolicy([]);
  it.each(REFUSED)('refuses %s (%s)', (address) => {
    expect(isSpecialPurpose(address)).toBe(true);
    expect(policy.addressAllowed(address, address)).toBe(false);
  });
  it.each(PUBLIC)('allows public %s', (address) => {
    expect(isSpecialPurpose(address)).toBe(false);
    expect(policy.addressAllowed(address, address)).toBe(true);
  });
});

/** Answers every name with the given addresses; records the names asked. */
function fakeResolver(addresses: string[], asked: string[] = []): Resolver {
  return (host, callback) => {
    asked.push(host);
    callback(
      null,
      addresses.map((address) => ({ address, family: address.includes(':') ? 6 : 4 })),
    );
  };
}

describe('URLs: literal hosts and names after resolution', () => {
  const urlForms = REFUSED.filter(([a]) => a !== 'not-an-address' && !a.includes('%')).map(([a]) =>
    a.includes(':') ? `http://[${a}]:8080/a.wav` : `http://${a}:8080/a.wav`,
  );

  it.each(urlForms)('refuses the literal URL %s without resolving', async (url) => {
    const asked: string[] = [];
    const policy = new UrlPolicy([], fakeResolver(['8.8.8.8'], asked));
    await expect(policy.check(url, 'sourceUrl')).rejects.toMatchObject({
      code: 'source_refused',
      details: { field: 'sourceUrl' },
    });
    expect(asked).toEqual([]);
  });

  it.each(REFUSED.filter(([a]) => a !== 'not-an-address'))('refuses a name that resolves to %s', async (address) => {
    const policy = new UrlPolicy([], fakeResolver([address]));
    await expect(policy.check('https://media.example.test/a.wav', 'callbackUrl')).rejects.toMatchObject({
      code: 'source_refused',
      details: { field: 'callbackUrl' },
    });
  });

  it('refuses a name when any one of its addresses is refused, allows all-public names', async () => {
    await expect(
      new UrlPolicy([], fakeResolver(['8.8.8.8', '64:ff9b::a00:1'])).check('https://m.example.test/', 'sourceUrl'),
    ).rejects.toBeInstanceOf(EarmarkError);
    await expect(
      new UrlPolicy([], fakeResolver(['8.8.8.8', '2001:4860:4860::8888'])).check(
        'https://m.example.test/',
        'sourceUrl',
      ),
    ).resolves.toBeInstanceOf(URL);
    await expect(
      new UrlPolicy([], fakeResolver([])).check('https://m.example.test/', 'sourceUrl'),
    ).rejects.toMatchObject({ code: 'source_refused' });
  });

  it('the lookup hook handed to http.request refuses at connect time', async () => {
    const lookup = new UrlPolicy([], fakeResolver(['2002:a00:1::1'])).lookupFor('m.example.test', 'sourceUrl');
    const error = await new Promise((resolve) => lookup('m.example.test', {}, (e) => resolve(e)));
    expect(error).toMatchObject({ code: 'source_refused' });
  });
});

describe('allowlist', () => {
  it('permits hosts, addresses and CIDRs (also in mapped form), nothing more', async () => {
    const allow = new UrlPolicy(
      ['127.0.0.1', '10.20.0.0/16', 'media.internal', 'fd00:1::/32'],
      fakeResolver(['10.9.9.9']),
    );
    expect(allow.addressAllowed('127.0.0.1', '127.0.0.1')).toBe(true);
    expect(allow.addressAllowed('::ffff:127.0.0.1', 'x')).toBe(true);
    expect(allow.addressAllowed('127.0.0.2', 'x')).toBe(false);
    expect(allow.addressAllowed('10.20.9.9', 'x')).toBe(true);
    expect(allow.addressAllowed('10.21.0.1', 'x')).toBe(false);
    expect(allow.addressAllowed('fd00:1::5', 'x')).toBe(true);
    expect(allow.addressAllowed('fd00:2::5', 'x')).toBe(false);
    // An allowed IPv4 does not open its other IPv6 embeddings.
    expect(allow.addressAllowed('::7f00:1', 'x')).toBe(false);
    expect(allow.addressAllowed('64:ff9b::7f00:1', 'x')).toBe(false);
    expect(allow.addressAllowed('10.9.9.9', 'media.internal')).toBe(true);
    await expect(allow.check('http://media.internal/a.wav', 'sourceUrl')).resolves.toBeInstanceOf(URL);
    await expect(allow.check('http://other.internal/a.wav', 'sourceUrl')).rejects.toMatchObject({
      code: 'source_refused',
    });
    await expect(allow.check('http://127.0.0.1:9/a.wav', 'sourceUrl')).resolves.toBeInstanceOf(URL);
  });

  it('refuses other schemes and credentials, and checks after DNS resolution', async () => {
    const policy = new UrlPolicy([]);
    expect(() => policy.parse('ftp://example.test/a', 'sourceUrl')).toThrow(EarmarkError);
    expect(() => policy.parse('http://u:p@example.test/a', 'sourceUrl')).toThrow(/credentials/);
    // "localhost" is a name, not an address: refused because the system resolver maps it to loopback.
    await expect(policy.check('http://localhost:9/x', 'callbackUrl')).rejects.toMatchObject({ code: 'source_refused' });
  });
});
