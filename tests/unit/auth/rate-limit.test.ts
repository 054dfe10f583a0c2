import { describe, expect, it } from 'vitest';
import { delayAfter, linkWaitMessage, passwordWaitMessage, waitText } from '@/lib/auth/rate-limit';

// OWASP Authentication Cheat Sheet: throttle with growing delays rather than lock the account.
describe('delayAfter', () => {
  const policy = { baseDelaySeconds: 30, maxDelaySeconds: 900 };
  it.each([
    [0, 0],
    [5, 0],
    [6, 30],
    [7, 60],
    [8, 120],
    [9, 240],
    [10, 480],
    [11, 900],
    [50, 900],
    [10_000, 900],
  ])('after %i failures with 5 free the next try waits %i s', (failures, wait) => {
    expect(delayAfter(failures, 5, policy)).toBe(wait);
  });
});

describe('messages', () => {
  it('say what happens, for how long, and what still works', () => {
    expect(waitText(1)).toBe('1 second');
    expect(waitText(45)).toBe('45 seconds');
    expect(waitText(60)).toBe('1 minute');
    expect(waitText(61)).toBe('2 minutes');
    expect(passwordWaitMessage({ limited: true, retryAfterSeconds: 30, scope: 'account_address' })).toBe(
      'Too many wrong passwords for this account from your network, so Lamina slows down further tries. Wait 30 seconds before the next try — or sign in with an e-mailed link, which still works. The account is not locked.',
    );
    expect(passwordWaitMessage({ limited: true, retryAfterSeconds: 120, scope: 'address' })).toMatch(/^Too many wrong passwords from your network.*Wait 2 minutes/);
    expect(linkWaitMessage({ limited: true, retryAfterSeconds: 600 })).toMatch(/Use the link already sent \(it works for 24 hours\), or ask again in 10 minutes\./);
  });
});
