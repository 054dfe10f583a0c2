import { describe, expect, it } from 'vitest';
import { bodyTypeRefusal, crossSiteRefusal } from '@/lib/security/request-guard';

const ORIGIN = 'https://lamina.example.test';
const h = (o: Record<string, string>) => new Headers(o);

describe('crossSiteRefusal', () => {
  it('lets reads through whatever their origin', () => {
    expect(crossSiteRefusal('GET', h({ origin: 'https://evil.example', 'sec-fetch-site': 'cross-site' }), ORIGIN)).toBeNull();
    expect(crossSiteRefusal('HEAD', h({}), ORIGIN)).toBeNull();
  });

  it('lets a write from Lamina’s own pages through', () => {
    expect(crossSiteRefusal('PATCH', h({ origin: ORIGIN, 'sec-fetch-site': 'same-origin' }), ORIGIN)).toBeNull();
    expect(crossSiteRefusal('POST', h({ origin: ORIGIN }), ORIGIN)).toBeNull(); // a browser without Fetch Metadata
  });

  it.each([
    ['a foreign origin', { origin: 'https://evil.example' }],
    ['a look-alike origin', { origin: `${ORIGIN}.evil.example` }],
    ['the same host over http', { origin: 'http://lamina.example.test' }],
    ['no origin at all', {}],
    ['origin null (sandboxed frame)', { origin: 'null' }],
    ['a cross-site fetch', { origin: ORIGIN, 'sec-fetch-site': 'cross-site' }],
    ['a same-site (sibling subdomain) fetch', { origin: ORIGIN, 'sec-fetch-site': 'same-site' }],
  ])('refuses a write with %s', (_label, headers) => {
    for (const method of ['POST', 'PUT', 'PATCH', 'DELETE']) {
      expect(crossSiteRefusal(method, h(headers), ORIGIN)).toMatchObject({ status: 403, error: 'cross_site' });
    }
  });
});

describe('bodyTypeRefusal', () => {
  const json = ['application/json'] as const;
  it('accepts JSON, with or without a charset, and a write without a body', () => {
    expect(bodyTypeRefusal('PATCH', h({ 'content-type': 'application/json', 'content-length': '2' }), json)).toBeNull();
    expect(bodyTypeRefusal('POST', h({ 'content-type': 'Application/JSON; charset=utf-8', 'content-length': '2' }), json)).toBeNull();
    expect(bodyTypeRefusal('DELETE', h({}), json)).toBeNull();
  });

  it.each(['text/plain', 'application/x-www-form-urlencoded', 'multipart/form-data; boundary=x', ''])('refuses a body sent as %j', (type) => {
    const headers = h({ 'content-length': '10', ...(type ? { 'content-type': type } : {}) });
    expect(bodyTypeRefusal('PATCH', headers, json)).toMatchObject({ status: 415, error: 'unsupported_media_type' });
  });

  it('takes multipart and CSV only where the route says so', () => {
    const multipart = h({ 'content-type': 'multipart/form-data; boundary=x', 'transfer-encoding': 'chunked' });
    expect(bodyTypeRefusal('POST', multipart, ['application/json', 'multipart/form-data', 'text/csv'])).toBeNull();
    expect(bodyTypeRefusal('POST', multipart, json)).not.toBeNull();
  });
});
