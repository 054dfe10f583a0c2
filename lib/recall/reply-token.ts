/**
 * Signed, expiring links for patients without an account: the reply link of a reminder
 * (confirm / another time / decline) and the unsubscribe link. Pure code on node:crypto.
 *
 * A token is `<payload>.<signature>`, both base64url without padding (RFC 4648 §5):
 *   payload   = JSON {v: 1, purpose, visitId, nonce, reminderId?, exp}
 *   signature = HMAC-SHA256(key, "lamina-link.v1." + <payload text>)
 * `exp` is a NumericDate in whole seconds; the token is refused from that second on (the
 * convention of RFC 7519 §4.1.4: "on or after the expiration time … MUST NOT be accepted").
 *
 * What verification tells apart, in this order:
 *   malformed      not two base64url parts, wrong signature length, non-canonical encoding,
 *                  or a signed payload that is not ours (cannot happen without the key)
 *   tampered       the signature does not match: changed payload, changed signature, other key
 *   wrong_purpose  a valid token made for the other purpose (an unsubscribe link used to reply)
 *   expired        valid, but `now` is on or after `exp`
 * Signatures are compared in constant time (crypto.timingSafeEqual).
 *
 * Single use is not decided here: the nonce is stored with the reminder, and the reply service
 * records its use under a unique key in the same transaction that changes the visit. A second
 * use then finds the nonce used and changes nothing. The nonce is not secret; the key is.
 */
import { createHmac, hkdfSync, randomBytes, timingSafeEqual } from 'node:crypto';

export const TOKEN_PURPOSES = ['reply', 'unsubscribe'] as const;
export type TokenPurpose = (typeof TOKEN_PURPOSES)[number];

/** Reply links stay valid 45 days: past the last notice and well into the visit's window. */
export const REPLY_TOKEN_TTL_DAYS = 45;
/**
 * Unsubscribe links stay valid a year: a patient may act on an old message, and an opt-out must
 * keep working for at least 30 days after sending (US CAN-SPAM Act, 15 U.S.C. 7704(a)(3)).
 */
export const UNSUBSCRIBE_TOKEN_TTL_DAYS = 365;
/** Bytes of randomness in a nonce (128 bits), written as 22 base64url characters. */
export const NONCE_BYTES = 16;
export const NONCE_PATTERN = /^[A-Za-z0-9_-]{22}$/;
/** The key must have at least this many bytes (the HMAC-SHA256 output size). */
export const MIN_SECRET_BYTES = 32;
/** Tokens longer than this are refused before any work. */
export const MAX_TOKEN_LENGTH = 1024;

const DOMAIN = 'lamina-link.v1.';
const SIGNATURE_BYTES = 32;
const B64URL = /^[A-Za-z0-9_-]+$/;
const DAY_MS = 24 * 60 * 60 * 1000;
const ID = /^[A-Za-z0-9_-]{1,64}$/;

export interface LinkTokenPayload {
  v: 1;
  purpose: TokenPurpose;
  visitId: string;
  /** Unique per token: the key under which single use is recorded. */
  nonce: string;
  /** The outbox row (Reminder) the link was sent in, when known. */
  reminderId?: string;
  /** Expiry, whole seconds since 1970-01-01T00:00:00Z. */
  exp: number;
}

export type VerifyFailure = 'malformed' | 'tampered' | 'wrong_purpose' | 'expired';
export type VerifyResult = { ok: true; payload: LinkTokenPayload } | { ok: false; reason: VerifyFailure };

export interface IssueInput {
  visitId: string;
  reminderId?: string;
  /** Leave out to draw a fresh one (the usual case). */
  nonce?: string;
}

/** A fresh random nonce: 128 bits, base64url. */
export function newNonce(): string {
  return randomBytes(NONCE_BYTES).toString('base64url');
}

/**
 * A key for links derived from the application secret with HKDF-SHA256 (RFC 5869), so links
 * and sessions never share a key even when one secret is configured.
 */
export function deriveLinkSecret(appSecret: string | Buffer): Buffer {
  return Buffer.from(hkdfSync('sha256', appSecret, Buffer.from('lamina'), Buffer.from('patient links v1'), 32));
}

function keyOf(secret: string | Buffer): Buffer {
  const key = typeof secret === 'string' ? Buffer.from(secret, 'utf8') : secret;
  if (key.length < MIN_SECRET_BYTES) throw new RangeError(`The link secret must have at least ${MIN_SECRET_BYTES} bytes.`);
  return key;
}

function sign(payloadPart: string, key: Buffer): Buffer {
  return createHmac('sha256', key).update(DOMAIN).update(payloadPart).digest();
}

/** Signs a payload as it is (for tests and callers that build their own); prefer the issue functions. */
export function signToken(payload: LinkTokenPayload, secret: string | Buffer): string {
  const problem = payloadProblem(payload);
  if (problem) throw new RangeError(`Cannot sign this link: ${problem}.`);
  const key = keyOf(secret);
  const ordered: LinkTokenPayload = {
    v: 1,
    purpose: payload.purpose,
    visitId: payload.visitId,
    nonce: payload.nonce,
    ...(payload.reminderId !== undefined ? { reminderId: payload.reminderId } : {}),
    exp: payload.exp,
  };
  const part = Buffer.from(JSON.stringify(ordered), 'utf8').toString('base64url');
  return `${part}.${sign(part, key).toString('base64url')}`;
}

function issue(purpose: TokenPurpose, input: IssueInput, secret: string | Buffer, now: Date, ttlDays: number) {
  if (!Number.isFinite(ttlDays) || ttlDays <= 0) throw new RangeError('A link must be valid for a positive number of days.');
  const payload: LinkTokenPayload = {
    v: 1,
    purpose,
    visitId: input.visitId,
    nonce: input.nonce ?? newNonce(),
    ...(input.reminderId !== undefined ? { reminderId: input.reminderId } : {}),
    exp: Math.floor((now.getTime() + ttlDays * DAY_MS) / 1000),
  };
  return { token: signToken(payload, secret), payload };
}

/** The token for a reminder's reply link, and its payload (store `payload.nonce` with the reminder). */
export function issueReplyToken(input: IssueInput, secret: string | Buffer, now: Date, ttlDays = REPLY_TOKEN_TTL_DAYS) {
  return issue('reply', input, secret, now, ttlDays);
}

/** The token for an unsubscribe link (and the List-Unsubscribe header's URL). */
export function issueUnsubscribeToken(input: IssueInput, secret: string | Buffer, now: Date, ttlDays = UNSUBSCRIBE_TOKEN_TTL_DAYS) {
  return issue('unsubscribe', input, secret, now, ttlDays);
}

function payloadProblem(p: unknown): string | null {
  if (typeof p !== 'object' || p === null || Array.isArray(p)) return 'not an object';
  const o = p as Record<string, unknown>;
  const allowed = new Set(['v', 'purpose', 'visitId', 'nonce', 'reminderId', 'exp']);
  if (Object.keys(o).some((k) => !allowed.has(k))) return 'unknown field';
  if (o.v !== 1) return 'unknown version';
  if (!(TOKEN_PURPOSES as readonly unknown[]).includes(o.purpose)) return 'unknown purpose';
  if (typeof o.visitId !== 'string' || !ID.test(o.visitId)) return 'bad visit id';
  if (typeof o.nonce !== 'string' || !NONCE_PATTERN.test(o.nonce)) return 'bad nonce';
  if (o.reminderId !== undefined && (typeof o.reminderId !== 'string' || !ID.test(o.reminderId))) return 'bad reminder id';
  if (typeof o.exp !== 'number' || !Number.isSafeInteger(o.exp) || o.exp <= 0) return 'bad expiry';
  return null;
}

/** base64url text to bytes, refusing anything that does not re-encode to the same text. */
function decodeCanonical(part: string): Buffer | null {
  if (!B64URL.test(part)) return null;
  const bytes = Buffer.from(part, 'base64url');
  return bytes.toString('base64url') === part ? bytes : null;
}

/** Checks a token made for `purpose`. See the top of this file for the reasons. */
export function verifyToken(token: unknown, secret: string | Buffer, now: Date, purpose: TokenPurpose): VerifyResult {
  const key = keyOf(secret);
  if (typeof token !== 'string' || token.length === 0 || token.length > MAX_TOKEN_LENGTH) return { ok: false, reason: 'malformed' };
  const parts = token.split('.');
  if (parts.length !== 2) return { ok: false, reason: 'malformed' };
  const [payloadPart, signaturePart] = parts as [string, string];
  const payloadBytes = decodeCanonical(payloadPart);
  const signature = decodeCanonical(signaturePart);
  if (!payloadBytes || !signature || signature.length !== SIGNATURE_BYTES) return { ok: false, reason: 'malformed' };

  if (!timingSafeEqual(signature, sign(payloadPart, key))) return { ok: false, reason: 'tampered' };

  let payload: unknown;
  try {
    payload = JSON.parse(payloadBytes.toString('utf8'));
  } catch {
    return { ok: false, reason: 'malformed' };
  }
  if (payloadProblem(payload)) return { ok: false, reason: 'malformed' };
  const p = payload as LinkTokenPayload;
  if (p.purpose !== purpose) return { ok: false, reason: 'wrong_purpose' };
  if (now.getTime() >= p.exp * 1000) return { ok: false, reason: 'expired' };
  return { ok: true, payload: p };
}

/** Checks a reply-link token. */
export function verifyReplyToken(token: unknown, secret: string | Buffer, now: Date): VerifyResult {
  return verifyToken(token, secret, now, 'reply');
}

/** Checks an unsubscribe-link token. */
export function verifyUnsubscribeToken(token: unknown, secret: string | Buffer, now: Date): VerifyResult {
  return verifyToken(token, secret, now, 'unsubscribe');
}

/** What a patient sees for each refusal: plain, and the same whatever went wrong inside. */
export const LINK_REFUSAL_MESSAGES: Record<VerifyFailure | 'used', string> = {
  malformed: 'This link is not complete. Please open it again from the e-mail, or contact the practice.',
  tampered: 'This link is not valid. Please open it again from the e-mail, or contact the practice.',
  wrong_purpose: 'This link is not valid here. Please use the matching link in the e-mail.',
  expired: 'This link has expired. Please contact the practice, or wait for the next message.',
  used: 'This link has already been used. If you want to change your answer, please contact the practice.',
};
