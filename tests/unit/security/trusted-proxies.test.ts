import { describe, expect, it } from 'vitest';
import { clientAddress, parseTrustedProxies } from '@/lib/security/trusted-proxies';

/**
 * X-Forwarded-For as scripts/web-server.mjs completes it: whatever the client (or proxies) sent,
 * then the socket's peer address. The right-most-trusted rule is common practice (OWASP, MDN on
 * X-Forwarded-For: "the rightmost IP address is the IP address of the most recent proxy").
 */
describe('clientAddress', () => {
  it('without trusted proxies is the socket address, whatever the client wrote', () => {
    for (const forged of ['203.0.113.1', '203.0.113.2', '198.51.100.9, 203.0.113.3']) {
      expect(clientAddress(`${forged}, 127.0.0.1`, { count: 0 })).toBe('127.0.0.1');
    }
    expect(clientAddress('::ffff:192.0.2.10', { count: 0 })).toBe('192.0.2.10');
  });

  it('with a count skips that many proxies from the right', () => {
    // forged by the client, then what the one proxy saw, then the proxy's own address (the socket).
    expect(clientAddress('6.6.6.6, 192.0.2.44, 10.0.0.2', { count: 1 })).toBe('192.0.2.44');
    expect(clientAddress('192.0.2.44, 10.0.0.2', { count: 5 })).toBe('192.0.2.44');
  });

  it('with a list skips the listed proxies from the right', () => {
    const trust = { addresses: ['10.0.0.2', '10.0.0.3'] };
    expect(clientAddress('6.6.6.6, 192.0.2.44, 10.0.0.3, 10.0.0.2', trust)).toBe('192.0.2.44');
    expect(clientAddress('6.6.6.6, 192.0.2.44', trust)).toBe('192.0.2.44'); // not through the proxy: the socket
  });

  it('is null without any address', () => {
    expect(clientAddress(null, { count: 0 })).toBeNull();
    expect(clientAddress(' , ', { count: 0 })).toBeNull();
  });
});

describe('parseTrustedProxies', () => {
  it('reads nothing, a count or a list', () => {
    expect(parseTrustedProxies(undefined)).toEqual({ count: 0 });
    expect(parseTrustedProxies(' 2 ')).toEqual({ count: 2 });
    expect(parseTrustedProxies('10.0.0.1,::1')).toEqual({ addresses: ['10.0.0.1', '::1'] });
    expect(parseTrustedProxies('all')).toHaveProperty('error');
    expect(parseTrustedProxies('99')).toHaveProperty('error');
  });
});
