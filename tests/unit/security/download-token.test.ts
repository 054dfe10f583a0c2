import { describe, expect, it } from 'vitest';
import { deriveDownloadKey, DOWNLOAD_LINK_TTL_SECONDS, signDownloadToken, verifyDownloadToken } from '@/lib/security/download-token';

const key = deriveDownloadKey('x'.repeat(40));
const exportId = '11111111-2222-4333-8444-555555555555';
const practiceId = 'aaaaaaaa-bbbb-4ccc-8ddd-eeeeeeeeeeee';
const now = new Date('2026-12-02T12:00:00Z');
const token = signDownloadToken({ exportId, practiceId, expiresAt: new Date(now.getTime() + 60_000) }, key);

describe('research download links (issue 14)', () => {
  it('opens for its export and practice before it expires', () => {
    expect(verifyDownloadToken(token, { exportId, practiceId }, key, now)).toMatchObject({ ok: true });
  });
  it('refuses after the expiry, for another export or practice, when changed or under another key', () => {
    expect(verifyDownloadToken(token, { exportId, practiceId }, key, new Date(now.getTime() + 60_000))).toEqual({ ok: false, reason: 'expired' });
    expect(verifyDownloadToken(token, { exportId: practiceId, practiceId }, key, now)).toEqual({ ok: false, reason: 'other_export' });
    expect(verifyDownloadToken(token, { exportId, practiceId: exportId }, key, now)).toEqual({ ok: false, reason: 'other_practice' });
    const later = token.replace(/\.(\d+)\./, (_m, s: string) => `.${Number(s) + 3600}.`);
    expect(verifyDownloadToken(later, { exportId, practiceId }, key, now)).toEqual({ ok: false, reason: 'tampered' });
    expect(verifyDownloadToken(token, { exportId, practiceId }, deriveDownloadKey('y'.repeat(40)), now)).toEqual({ ok: false, reason: 'tampered' });
    expect(verifyDownloadToken('nope', { exportId, practiceId }, key, now)).toEqual({ ok: false, reason: 'malformed' });
  });
  it('lasts three days by default (common practice for a link to a file: days, not weeks)', () => {
    expect(DOWNLOAD_LINK_TTL_SECONDS).toBe(259_200);
  });
});
