import { describe, expect, it } from 'vitest';
// @ts-expect-error -- next.config.mjs is plain JavaScript without a declaration file
import nextConfigModule from '../../../next.config.mjs';
import type { NextConfig } from 'next';
import { dynamicHeaders, HSTS, newNonce, pagePolicy, STATIC_HEADERS } from '@/lib/security/headers';

const nextConfig = nextConfigModule as NextConfig;

const directives = (policy: string) => Object.fromEntries(policy.split('; ').map((d) => [d.split(' ')[0], d.split(' ').slice(1)]));

describe('security headers', () => {
  it('page CSP: scripts only by nonce (no unsafe-inline), never framed', () => {
    const d = directives(pagePolicy({ nonce: 'abc123', https: false, dev: false }));
    expect(d['script-src']).toEqual(["'self'", "'nonce-abc123'", "'strict-dynamic'"]);
    expect(d['frame-ancestors']).toEqual(["'none'"]);
    expect(d['object-src']).toEqual(["'none'"]);
    expect(d['upgrade-insecure-requests']).toBeUndefined();
  });

  it('HSTS and upgraded requests only when the public URL is https', () => {
    expect(dynamicHeaders('page', { nonce: 'n', https: true, dev: false })['Strict-Transport-Security']).toBe(HSTS);
    expect(dynamicHeaders('api', { nonce: 'n', https: true, dev: false })['Strict-Transport-Security']).toBe(HSTS);
    expect(dynamicHeaders('page', { nonce: 'n', https: false, dev: false })).not.toHaveProperty('Strict-Transport-Security');
    expect(pagePolicy({ nonce: 'n', https: true, dev: false })).toContain('upgrade-insecure-requests');
  });

  it('a fresh nonce each time', () => {
    const a = newNonce();
    expect(a).toMatch(/^[A-Za-z0-9+/]{22}==$/);
    expect(newNonce()).not.toBe(a);
  });

  it('next.config.mjs sends exactly the static headers', async () => {
    const rules = await nextConfig.headers!();
    const sent = Object.fromEntries(rules[0]!.headers.map((x: { key: string; value: string }) => [x.key, x.value]));
    expect(sent).toEqual(STATIC_HEADERS);
  });
});
