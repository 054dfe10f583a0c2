import { hkdfSync, randomUUID } from 'node:crypto';
import { EncryptJWT, jwtDecrypt } from 'jose';
import type { JWT, JWTDecodeParams, JWTEncodeParams } from 'next-auth/jwt';

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

export async function decodeSessionToken({ token, secret, salt = '' }: JWTDecodeParams): Promise<JWT | null> {
  if (!token) return null;
  const { payload } = await jwtDecrypt(token, keyFor(secret, salt), { clockTolerance: 15 });
  return payload as JWT;
}
