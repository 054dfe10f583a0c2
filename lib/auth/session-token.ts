import { hkdfSync, randomUUID } from 'node:crypto';
import { EncryptJWT, jwtDecrypt } from 'jose';
import type { JWT, JWTDecodeParams, JWTEncodeParams } from 'next-auth/jwt';
import { keepRecent } from '@/lib/kept-recently';

/**
 * The session cookie's codec: next-auth's own JWT format (a JWE, "dir" + A256GCM, with the key
 * derived from the secret by HKDF-SHA256 under next-auth's label and salt, 15 s of clock tolerance),
 * with the derived key computed once per secret and salt instead of on every request (the
 * derivation was ~2.6 ms of every request under load: issue 15, `npm run bench -- load`).
 * Tokens made by next-auth's encoder read here and the other way round (tests/unit/auth/session-token.test.ts).
 */
const keys = new Map<string, Uint8Array>();

function keyFor(secret: string | Buffer, salt: string): Uint8Array {
  const id = `${salt}\u0000${secret.toString()}`;
  let key = keys.get(id);
  if (!key) {
    const label = `NextAuth.js Generated Encryption Key${salt ? ` (${salt})` : ''}`;
    key = new Uint8Array(hkdfSync('sha256', secret, salt, label, 32));
    keys.set(id, key);
  }
  return key;
}

const DEFAULT_MAX_AGE = 30 * 24 * 60 * 60;
const nowSeconds = () => (Date.now() / 1000) | 0;

export async function encodeSessionToken({ token = {}, secret, maxAge = DEFAULT_MAX_AGE, salt = '' }: JWTEncodeParams): Promise<string> {
  return new EncryptJWT(token)
    .setProtectedHeader({ alg: 'dir', enc: 'A256GCM' })
    .setIssuedAt()
    .setExpirationTime(nowSeconds() + maxAge)
    .setJti(randomUUID())
    .encrypt(keyFor(secret, salt));
}

/**
 * Tokens already decrypted, with their claims (at most MAX_DECODED, the least recently used going):
 * a signed-in browser sends the same cookie on every request, and its decryption was about 1.5 % of
 * the web server's time under load (issue 15). Only the exact token string finds its claims, so
 * nothing can be read here that was not decrypted with the key; the expiry is checked again on
 * every use, and the session's version and practice are still checked against the database on
 * every request (lib/auth/session.ts).
 */
const MAX_DECODED = 2000;
const CLOCK_TOLERANCE_S = 15;
const decoded = new Map<string, JWT>();

export async function decodeSessionToken({ token, secret, salt = '' }: JWTDecodeParams): Promise<JWT | null> {
  if (!token) return null;
  const id = `${salt}\u0000${secret.toString()}\u0000${token}`;
  const kept = decoded.get(id);
  if (kept && (typeof kept.exp !== 'number' || kept.exp + CLOCK_TOLERANCE_S > nowSeconds())) return { ...keepRecent(decoded, id, kept, MAX_DECODED) };
  decoded.delete(id);
  const { payload } = await jwtDecrypt(token, keyFor(secret, salt), { clockTolerance: CLOCK_TOLERANCE_S });
  keepRecent(decoded, id, payload as JWT, MAX_DECODED);
  return { ...(payload as JWT) };
}
