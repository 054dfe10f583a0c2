import { describe, expect, it } from 'vitest';
import { safeReturnPath } from '@/lib/security/return-path';

/** Open-redirect forms from OWASP's Unvalidated Redirects cheat sheet and common practice. */
describe('safeReturnPath', () => {
  it.each([
    ['/', '/'],
    ['/cases', '/cases'],
    ['/cases/new?patient=3f1c2b4e-0000-4000-8000-000000000000', '/cases/new?patient=3f1c2b4e-0000-4000-8000-000000000000'],
    ['/patients?q=a%2Fb#top', '/patients?q=a%2Fb#top'],
  ])('keeps the local path %s', (raw, want) => {
    expect(safeReturnPath(raw)).toBe(want);
  });

  it.each([
    '//evil.example/x',
    '///evil.example/x',
    '/\\evil.example/x',
    '\\\\evil.example/x',
    '/\t/evil.example/x',
    '/\n/evil.example',
    'https://evil.example/x',
    'http:evil.example',
    'javascript:alert(1)',
    'evil.example',
    '%2F%2Fevil.example/x',
    '/%2F/evil.example/x',
    '/%5Cevil.example',
    '/%252F%252Fevil.example',
    '/%09/evil.example',
    '%68ttps://evil.example',
    '/%E0%A4%A',
    '',
  ])('refuses %j', (raw) => {
    expect(safeReturnPath(raw)).toBe('/');
  });

  it('refuses what is not a string, and gives the fallback asked for', () => {
    expect(safeReturnPath(undefined)).toBe('/');
    expect(safeReturnPath(['/cases'])).toBe('/');
    expect(safeReturnPath('//evil.example', '/sign-in')).toBe('/sign-in');
  });
});
