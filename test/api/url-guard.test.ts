// Outbound URL policy. Address ranges: RFC 1918 (private), RFC 1122 s.3.2.1.3 (0/8, 127/8
// loopback), RFC 3927 (169.254/16 link-local), RFC 6598 (100.64/10), RFC 4193 (fc00::/7),
// RFC 4291 (::1, fe80::/10, ::ffff:0:0/96 IPv4-mapped).
import { describe, expect, it } from 'vitest';
import { EarmarkError } from '../../src/errors/index.ts';
import { UrlPolicy } from '../../src/net/url-guard.ts';

describe('UrlPolicy', () => {
  const policy = new UrlPolicy([]);
  it.each(['127.0.0.1', '10.0.0.5', '172.16.3.4', '192.168.1.1', '169.254.169.254', '100.64.0.1', '0.0.0.0', '::1', 'fe80::1', 'fd12::1', '::ffff:127.0.0.1'])('refuses %s', (address) => {
    expect(policy.addressAllowed(address, address)).toBe(false);
  });
  it.each(['93.184.216.34', '8.8.8.8', '2001:4860:4860::8888', '172.32.0.1'])('allows public %s', (address) => {
    expect(policy.addressAllowed(address, address)).toBe(true);
  });
  it('the allowlist permits hosts and CIDRs', () => {
    const allow = new UrlPolicy(['127.0.0.1', '10.20.0.0/16', 'media.internal']);
    expect(allow.addressAllowed('127.0.0.1', '127.0.0.1')).toBe(true);
    expect(allow.addressAllowed('10.20.9.9', 'x')).toBe(true);
    expect(allow.addressAllowed('10.21.0.1', 'x')).toBe(false);
    expect(allow.addressAllowed('10.9.9.9', 'media.internal')).toBe(true);
  });
  it('refuses other schemes and credentials, and checks after DNS resolution', async () => {
    expect(() => policy.parse('ftp://example.test/a', 'sourceUrl')).toThrow(EarmarkError);
    expect(() => policy.parse('http://u:p@example.test/a', 'sourceUrl')).toThrow(/credentials/);
    // "localhost" is a name, not an address: refused because it resolves to loopback.
    await expect(policy.check('http://localhost:9/x', 'callbackUrl')).rejects.toMatchObject({ code: 'source_refused' });
  });
});
