import { createHmac } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
  LINK_REFUSAL_MESSAGES,
  NONCE_PATTERN,
  REPLY_TOKEN_TTL_DAYS,
  UNSUBSCRIBE_TOKEN_TTL_DAYS,
  deriveLinkSecret,
  issueReplyToken,
  issueUnsubscribeToken,
  newNonce,
  signToken,
  verifyReplyToken,
  verifyUnsubscribeToken,
  type LinkTokenPayload,
} from '@/lib/recall/reply-token';

const SECRET = 'a-test-secret-of-at-least-thirty-two-bytes!';
const OTHER = 'another-secret-of-at-least-thirty-two-bytes';
const NOW = new Date('2026-03-01T10:00:00.000Z');
const VISIT = '3f2b8c1e-9a4d-4e7b-8c2a-1d5e6f7a8b9c';
const DAY = 86_400_000;

const b64 = (s: string) => Buffer.from(s, 'utf8').toString('base64url');
const later = (ms: number) => new Date(NOW.getTime() + ms);

/** Flips one character of a base64url string to another valid one. */
function flip(s: string, at: number): string {
  const c = s[at]!;
  return s.slice(0, at) + (c === 'A' ? 'B' : 'A') + s.slice(at + 1);
}

describe('reply token: round trip', () => {
  it('verifies what it issued and returns the payload', () => {
    const { token, payload } = issueReplyToken({ visitId: VISIT, reminderId: 'r-1' }, SECRET, NOW);
    expect(payload).toMatchObject({ v: 1, purpose: 'reply', visitId: VISIT, reminderId: 'r-1' });
    expect(payload.nonce).toMatch(NONCE_PATTERN);
    expect(payload.exp).toBe(Math.floor((NOW.getTime() + REPLY_TOKEN_TTL_DAYS * DAY) / 1000));
    expect(verifyReplyToken(token, SECRET, NOW)).toEqual({ ok: true, payload });
    expect(token).toMatch(/^[A-Za-z0-9_-]+\.[A-Za-z0-9_-]{43}$/); // safe in a URL path, no padding
  });

  it('draws a new nonce for each token (what single use is recorded under), or keeps one given', () => {
    const a = issueReplyToken({ visitId: VISIT }, SECRET, NOW);
    const b = issueReplyToken({ visitId: VISIT }, SECRET, NOW);
    expect(a.payload.nonce).not.toBe(b.payload.nonce);
    expect(a.token).not.toBe(b.token);
    const nonce = newNonce();
    expect(issueReplyToken({ visitId: VISIT, nonce }, SECRET, NOW).payload.nonce).toBe(nonce);
  });

  it('is deterministic for the same payload and key', () => {
    const p: LinkTokenPayload = { v: 1, purpose: 'reply', visitId: VISIT, nonce: 'AAAAAAAAAAAAAAAAAAAAAA', exp: 1_800_000_000 };
    expect(signToken(p, SECRET)).toBe(signToken({ ...p }, SECRET));
  });

  it('accepts a Buffer key, and a key derived from the app secret with HKDF', () => {
    const key = deriveLinkSecret('the-app-secret-from-the-environment-xxxxxxxx');
    expect(key.length).toBe(32);
    expect(deriveLinkSecret('the-app-secret-from-the-environment-xxxxxxxx').equals(key)).toBe(true);
    const { token } = issueReplyToken({ visitId: VISIT }, key, NOW);
    expect(verifyReplyToken(token, key, NOW).ok).toBe(true);
    expect(verifyReplyToken(token, deriveLinkSecret('another-app-secret-from-the-environment-xx'), NOW)).toEqual({ ok: false, reason: 'tampered' });
  });

  it('refuses a key shorter than 32 bytes', () => {
    expect(() => issueReplyToken({ visitId: VISIT }, 'short', NOW)).toThrow(RangeError);
    expect(() => verifyReplyToken('x.y', 'short', NOW)).toThrow(RangeError);
  });

  it('refuses to sign ids that do not fit', () => {
    expect(() => issueReplyToken({ visitId: 'a:b' }, SECRET, NOW)).toThrow(/visit id/);
    expect(() => issueReplyToken({ visitId: VISIT, nonce: 'short' }, SECRET, NOW)).toThrow(/nonce/);
    expect(() => issueReplyToken({ visitId: VISIT }, SECRET, NOW, 0)).toThrow(RangeError);
  });
});

describe('reply token: refusals', () => {
  const { token } = issueReplyToken({ visitId: VISIT }, SECRET, NOW);
  const [payloadPart, signaturePart] = token.split('.') as [string, string];

  it('a changed payload is tampered', () => {
    const json = JSON.parse(Buffer.from(payloadPart, 'base64url').toString()) as LinkTokenPayload;
    const other = b64(JSON.stringify({ ...json, visitId: 'someone-else' }));
    expect(verifyReplyToken(`${other}.${signaturePart}`, SECRET, NOW)).toEqual({ ok: false, reason: 'tampered' });
    const longer = b64(JSON.stringify({ ...json, exp: json.exp + 365 * 86_400 }));
    expect(verifyReplyToken(`${longer}.${signaturePart}`, SECRET, NOW)).toEqual({ ok: false, reason: 'tampered' });
    expect(verifyReplyToken(`${flip(payloadPart, 5)}.${signaturePart}`, SECRET, NOW)).toEqual({ ok: false, reason: 'tampered' });
  });

  it('a changed signature is tampered, wherever the change is', () => {
    for (const at of [0, 10, 21, 41]) {
      expect(verifyReplyToken(`${payloadPart}.${flip(signaturePart, at)}`, SECRET, NOW)).toEqual({ ok: false, reason: 'tampered' });
    }
  });

  it('the last signature character with unused bits changed is malformed, not a second valid spelling', () => {
    // 32 bytes take 43 characters; the last carries 4 bits and 2 unused ones.
    const last = signaturePart[42]!;
    const alphabet = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_';
    const sibling = alphabet[alphabet.indexOf(last) ^ 1]!;
    expect(verifyReplyToken(`${payloadPart}.${signaturePart.slice(0, 42)}${sibling}`, SECRET, NOW)).toEqual({ ok: false, reason: 'malformed' });
  });

  it('another key is tampered', () => {
    expect(verifyReplyToken(token, OTHER, NOW)).toEqual({ ok: false, reason: 'tampered' });
  });

  it('expires at exp (RFC 7519 §4.1.4 convention: refused on or after), not a millisecond before', () => {
    const exp = issueReplyToken({ visitId: VISIT }, SECRET, NOW).payload.exp;
    const at = (ms: number) => new Date(exp * 1000 + ms);
    expect(verifyReplyToken(token, SECRET, at(-1)).ok).toBe(true);
    expect(verifyReplyToken(token, SECRET, at(0))).toEqual({ ok: false, reason: 'expired' });
    expect(verifyReplyToken(token, SECRET, at(1))).toEqual({ ok: false, reason: 'expired' });
    expect(verifyReplyToken(token, SECRET, later(REPLY_TOKEN_TTL_DAYS * DAY - 1000)).ok).toBe(true);
  });

  it('an expired token that was also changed is reported as tampered (the signature is checked first)', () => {
    expect(verifyReplyToken(`${payloadPart}.${flip(signaturePart, 3)}`, SECRET, later(400 * DAY))).toEqual({ ok: false, reason: 'tampered' });
  });

  const signedJunk = (json: string) => {
    // A payload signed with the right key but not of our shape: only a bug could make one.
    const part = b64(json);
    const sig = createHmac('sha256', SECRET).update('lamina-link.v1.').update(part).digest('base64url');
    return `${part}.${sig}`;
  };

  it.each([
    ['empty', ''],
    ['no dot', payloadPart],
    ['three parts', `${token}.x`],
    ['empty signature', `${payloadPart}.`],
    ['empty payload', `.${signaturePart}`],
    ['padding', `${payloadPart}.${signaturePart}=`],
    ['standard base64 characters', `${payloadPart}.${signaturePart.slice(0, 41)}+/`],
    ['short signature', `${payloadPart}.${signaturePart.slice(0, 40)}`],
    ['spaces', ` ${token}`],
    ['very long', `${'A'.repeat(2000)}.${signaturePart}`],
    ['signed but not JSON', signedJunk('{nope')],
    ['signed JSON of another shape', signedJunk('{"v":2,"purpose":"reply"}')],
    ['signed with an extra field', signedJunk(JSON.stringify({ v: 1, purpose: 'reply', visitId: VISIT, nonce: 'AAAAAAAAAAAAAAAAAAAAAA', exp: 1_900_000_000, admin: true }))],
  ])('%s is malformed', (_label, bad) => {
    expect(verifyReplyToken(bad, SECRET, NOW)).toEqual({ ok: false, reason: 'malformed' });
  });

  it.each([undefined, null, 42, {}, ['a.b']])('a non-string (%j) is malformed', (bad) => {
    expect(verifyReplyToken(bad, SECRET, NOW)).toEqual({ ok: false, reason: 'malformed' });
  });
});

describe('unsubscribe token', () => {
  it('lives longer (a year) and round-trips', () => {
    const { token, payload } = issueUnsubscribeToken({ visitId: VISIT }, SECRET, NOW);
    expect(payload.purpose).toBe('unsubscribe');
    expect(UNSUBSCRIBE_TOKEN_TTL_DAYS).toBeGreaterThan(REPLY_TOKEN_TTL_DAYS);
    expect(verifyUnsubscribeToken(token, SECRET, later(300 * DAY))).toMatchObject({ ok: true });
    expect(verifyUnsubscribeToken(token, SECRET, later(UNSUBSCRIBE_TOKEN_TTL_DAYS * DAY))).toEqual({ ok: false, reason: 'expired' });
  });

  it('a purpose mix-up is refused both ways', () => {
    const unsubscribe = issueUnsubscribeToken({ visitId: VISIT }, SECRET, NOW).token;
    const reply = issueReplyToken({ visitId: VISIT }, SECRET, NOW).token;
    expect(verifyReplyToken(unsubscribe, SECRET, NOW)).toEqual({ ok: false, reason: 'wrong_purpose' });
    expect(verifyUnsubscribeToken(reply, SECRET, NOW)).toEqual({ ok: false, reason: 'wrong_purpose' });
  });
});

describe('refusal messages', () => {
  it('has a plain message for each refusal and for a used link', () => {
    for (const key of ['malformed', 'tampered', 'wrong_purpose', 'expired', 'used'] as const) {
      expect(LINK_REFUSAL_MESSAGES[key]).toMatch(/^This link /);
    }
  });
});
