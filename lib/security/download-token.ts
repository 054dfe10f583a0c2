/**
 * Signed, expiring download links of research exports (issue 14): `<exportId>.<practiceId>.<expires
 * (unix seconds)>.<HMAC-SHA256, base64url>` under a key derived from the app's secret for this
 * purpose only. The route also asks for the researcher's session in the export's practice: a link
 * that leaks opens nothing without it. Pure (no I/O); compared in constant time.
 */
import { createHmac, hkdfSync, timingSafeEqual } from 'node:crypto';

/** How long a link works: three days (the e-mailed notice says so). Lamina's own choice. */
export const DOWNLOAD_LINK_TTL_SECONDS = 3 * 24 * 60 * 60;
const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

export function deriveDownloadKey(appSecret: string | Buffer): Buffer {
  return Buffer.from(hkdfSync('sha256', appSecret, Buffer.from('lamina'), Buffer.from('cohort downloads v1'), 32));
}

const mac = (key: Buffer, payload: string) => createHmac('sha256', key).update('cohort-download\0').update(payload).digest();

export function signDownloadToken(input: { exportId: string; practiceId: string; expiresAt: Date }, key: Buffer): string {
  const payload = `${input.exportId}.${input.practiceId}.${Math.floor(input.expiresAt.getTime() / 1000)}`;
  return `${payload}.${mac(key, payload).toString('base64url')}`;
}

export type DownloadTokenCheck = { ok: true; expiresAt: Date } | { ok: false; reason: 'malformed' | 'tampered' | 'expired' | 'other_export' | 'other_practice' };

/** Checks a token against the export and practice asked for, at `now`. */
export function verifyDownloadToken(token: string, expect: { exportId: string; practiceId: string }, key: Buffer, now: Date): DownloadTokenCheck {
  const parts = token.split('.');
  if (parts.length !== 4) return { ok: false, reason: 'malformed' };
  const [exportId, practiceId, expires, signature] = parts as [string, string, string, string];
  if (!UUID.test(exportId) || !UUID.test(practiceId) || !/^\d{1,12}$/.test(expires) || !/^[A-Za-z0-9_-]{43}$/.test(signature)) return { ok: false, reason: 'malformed' };
  const given = Buffer.from(signature, 'base64url');
  const wanted = mac(key, `${exportId}.${practiceId}.${expires}`);
  if (given.length !== wanted.length || !timingSafeEqual(given, wanted)) return { ok: false, reason: 'tampered' };
  if (exportId.toLowerCase() !== expect.exportId.toLowerCase()) return { ok: false, reason: 'other_export' };
  if (practiceId.toLowerCase() !== expect.practiceId.toLowerCase()) return { ok: false, reason: 'other_practice' };
  const expiresAt = new Date(Number(expires) * 1000);
  if (expiresAt.getTime() <= now.getTime()) return { ok: false, reason: 'expired' };
  return { ok: true, expiresAt };
}
