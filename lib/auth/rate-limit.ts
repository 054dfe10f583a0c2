import 'server-only';
import type { Redis } from 'ioredis';

/**
 * Sign-in attempt limits, per account and per address, kept in Redis so every web process
 * shares them. Failures count up inside a fixed window; a success clears the account's count.
 */
export interface RateLimitPolicy {
  maxPerAccount: number;
  maxPerAddress: number;
  windowSeconds: number;
}

const accountKey = (email: string) => `lamina:signin:acct:${email.toLowerCase()}`;
const addressKey = (ip: string) => `lamina:signin:addr:${ip}`;
/** The account's key, then the address's when there is one. */
const keysOf = (email: string, ip: string | null) => [accountKey(email), ...(ip ? [addressKey(ip)] : [])];

export interface LimitState {
  limited: boolean;
  /** Seconds until the attempts are allowed again (0 when not limited). */
  retryAfterSeconds: number;
  scope?: 'account' | 'address';
}

export async function checkSignInLimit(
  r: Redis,
  policy: RateLimitPolicy,
  email: string,
  ip: string | null,
): Promise<LimitState> {
  const keys = keysOf(email, ip);
  const counts = await r.mget(...keys);
  const acct = Number(counts[0] ?? 0);
  const addr = ip ? Number(counts[1] ?? 0) : 0;
  if (acct >= policy.maxPerAccount) {
    return { limited: true, retryAfterSeconds: await ttl(r, keys[0]!, policy), scope: 'account' };
  }
  if (ip && addr >= policy.maxPerAddress) {
    return { limited: true, retryAfterSeconds: await ttl(r, keys[1]!, policy), scope: 'address' };
  }
  return { limited: false, retryAfterSeconds: 0 };
}

export async function recordSignInFailure(r: Redis, policy: RateLimitPolicy, email: string, ip: string | null) {
  const m = r.multi();
  for (const key of keysOf(email, ip)) {
    m.incr(key);
    m.expire(key, policy.windowSeconds, 'NX');
  }
  await m.exec();
}

export async function clearAccountFailures(r: Redis, email: string) {
  await r.del(accountKey(email));
}

async function ttl(r: Redis, key: string, policy: RateLimitPolicy): Promise<number> {
  const t = await r.ttl(key);
  return t > 0 ? t : policy.windowSeconds;
}

export function retryMessage(seconds: number): string {
  const minutes = Math.max(1, Math.ceil(seconds / 60));
  return `Too many sign-in attempts. Wait ${minutes} minute${minutes === 1 ? '' : 's'} and try again, or use an e-mailed sign-in link.`;
}
