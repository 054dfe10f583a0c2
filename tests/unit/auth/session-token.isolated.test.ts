import { afterEach, describe, expect, it, vi } from 'vitest';
import { decodeSessionToken, encodeSessionToken } from '@/lib/auth/session-token';

/** The session cookie's codec keeps tokens it has decrypted (lib/auth/session-token.ts); the clock is faked, so this file is isolated. */
const secret = 'a-test-secret-of-enough-length-0123456789';
const token = { userId: 'u-1', sv: 3, practiceId: 'p-1' };

describe('a token already read', () => {
  afterEach(() => vi.useRealTimers());

  it('gives the same claims again, a fresh copy each time, and is refused once expired', async () => {
    const ours = await encodeSessionToken({ token, secret, maxAge: 60 });
    const first = await decodeSessionToken({ token: ours, secret });
    const again = await decodeSessionToken({ token: ours, secret });
    expect(again).toEqual(first);
    expect(again).not.toBe(first);
    (again as Record<string, unknown>).userId = 'changed';
    expect(await decodeSessionToken({ token: ours, secret })).toMatchObject(token);
    // another secret or salt does not find it
    await expect(decodeSessionToken({ token: ours, secret: `${secret}-other` })).rejects.toThrow();
    await expect(decodeSessionToken({ token: ours, secret, salt: 'other' })).rejects.toThrow();
    // within the tolerance after its expiry it is still read; beyond it, refused
    vi.useFakeTimers({ now: Date.now() + 70_000 });
    expect(await decodeSessionToken({ token: ours, secret })).toMatchObject(token);
    vi.setSystemTime(Date.now() + 10_000);
    await expect(decodeSessionToken({ token: ours, secret })).rejects.toThrow(/exp/);
  });
});
