/**
 * The referrer's upload link (issue 13): a signed, single-purpose token for one upload link row.
 * Pure code on node:crypto.
 *
 *   token = base64url(HMAC-SHA256(key, "lamina-referrer-upload.v1\0" + linkId))   (43 characters)
 *   key   = HKDF-SHA256(NEXTAUTH_SECRET, info "referrer upload links v1")        (deriveUploadLinkSecret)
 *
 * The database keeps only `tokenHash(token)` (SHA-256, hex): a copy of the database alone can
 * neither read nor forge a link (the key is not in it), and the mail job recomputes the same token
 * from the row id on every attempt, so every attempt sends the same message. Expiry and single use
 * live on the row (expires_at, used_at), checked and consumed atomically by the service. The
 * purpose is fixed by the HMAC's domain string: a patient link (lib/recall/reply-token.ts) uses
 * another key and another domain, so one can never stand for the other.
 */
import { createHash, createHmac, hkdfSync } from 'node:crypto';

const DOMAIN = 'lamina-referrer-upload.v1\u0000';
/** 32 bytes of HMAC as base64url without padding. */
export const UPLOAD_TOKEN_PATTERN = /^[A-Za-z0-9_-]{43}$/;
/** How long a link stays valid unless the sender chooses otherwise (common practice: two weeks). */
export const UPLOAD_LINK_DEFAULT_DAYS = 14;
export const UPLOAD_LINK_MAX_DAYS = 30;

export function deriveUploadLinkSecret(appSecret: string | Buffer): Buffer {
  return Buffer.from(hkdfSync('sha256', appSecret, Buffer.from('lamina'), Buffer.from('referrer upload links v1'), 32));
}

/** The token of an upload link row. */
export function uploadToken(linkId: string, key: Buffer): string {
  if (key.length < 32) throw new RangeError('The upload-link key must have at least 32 bytes.');
  return createHmac('sha256', key).update(DOMAIN).update(linkId).digest().toString('base64url');
}

/** What the database stores: SHA-256 of the token, hex. */
export function tokenHash(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

/** A token worth looking up (anything else is refused before any query). */
export function isWellFormedToken(token: unknown): token is string {
  return typeof token === 'string' && UPLOAD_TOKEN_PATTERN.test(token);
}

/** "A. B." from a given and a family name: all a referrer's page shows of the patient. */
export function initialsOf(givenName: string, familyName: string): string {
  const first = (s: string) => {
    const ch = [...s.trim()][0];
    return ch ? `${ch.toLocaleUpperCase('en')}.` : '';
  };
  return [first(givenName), first(familyName)].filter(Boolean).join(' ');
}

/** Why a link can no longer be used, in the words the public page shows. */
export type LinkState = 'open' | 'used' | 'expired';

export function linkState(link: { usedAt: Date | null; expiresAt: Date }, now: Date): LinkState {
  if (link.usedAt) return 'used';
  if (now.getTime() >= link.expiresAt.getTime()) return 'expired';
  return 'open';
}

export const GONE_MESSAGES: Record<Exclude<LinkState, 'open'>, string> = {
  used: 'This upload link has already been used: each link takes one upload. Ask the practice for a new link if a film is missing.',
  expired: 'This upload link has expired. Ask the practice for a new link.',
};
