import { describe, expect, it } from 'vitest';
import { decode, encode } from 'next-auth/jwt';
import { decodeSessionToken, encodeSessionToken } from '@/lib/auth/session-token';

/** The session cookie's codec with its key derived once (lib/auth/session-token.ts) reads and writes next-auth's own tokens. */
describe('session token codec', () => {
  const secret = 'a-test-secret-of-enough-length-0123456789';
  const token = { userId: 'u-1', sv: 3, practiceId: 'p-1' };

  it("reads a token made by next-auth's encoder, and next-auth's decoder reads ours", async () => {
    const theirs = await encode({ token, secret, maxAge: 3600 });
    expect(await decodeSessionToken({ token: theirs, secret })).toMatchObject(token);
    const ours = await encodeSessionToken({ token, secret, maxAge: 3600 });
    const read = await decode({ token: ours, secret });
    expect(read).toMatchObject(token);
    expect(Number(read!.exp) - Number(read!.iat)).toBe(3600);
    expect(read!.jti).toMatch(/^[0-9a-f-]{36}$/);
  });

  it('a salt gives another key, as in next-auth', async () => {
    const salted = await encode({ token, secret, salt: 'other', maxAge: 60 });
    expect(await decodeSessionToken({ token: salted, secret, salt: 'other' })).toMatchObject(token);
    await expect(decodeSessionToken({ token: salted, secret })).rejects.toThrow();
  });

  it('refuses a token of another secret, a changed token and an expired one; no token is null', async () => {
    const ours = await encodeSessionToken({ token, secret, maxAge: 60 });
    await expect(decodeSessionToken({ token: ours, secret: `${secret}-other` })).rejects.toThrow();
    const parts = ours.split('.');
    parts[3] = parts[3]!.slice(0, -2) + (parts[3]!.endsWith('AA') ? 'BB' : 'AA');
    await expect(decodeSessionToken({ token: parts.join('.'), secret })).rejects.toThrow();
    const old = await encodeSessionToken({ token, secret, maxAge: -60 }); // expired a minute ago (beyond the 15 s tolerance)
    await expect(decodeSessionToken({ token: old, secret })).rejects.toThrow(/exp/);
    expect(await decodeSessionToken({ token: undefined, secret })).toBeNull();
  });
});
