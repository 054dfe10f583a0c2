import 'server-only';
import type { Redis } from 'ioredis';
import { RateLimiterRedis, RateLimiterRes } from 'rate-limiter-flexible';

/**
 * Sign-in throttling without a lockout anyone can trigger (OWASP Authentication Cheat Sheet,
 * "Login Throttling" / "Account Lockout"; OWASP Blocking Brute Force Attacks). Kept in Redis
 * through `rate-limiter-flexible`, so every web process shares it.
 *
 * Passwords. Wrong passwords are counted per account-and-address (this e-mail from this client
 * address) and per address (every e-mail from this address). The first `freePerAccountAddress`
 * (and `freePerAddress`) failures cost nothing; each later failure makes the next attempt wait,
 * the wait doubling each time from `baseDelaySeconds` up to `maxDelaySeconds`. Counts are
 * forgotten `windowSeconds` after the first failure; a correct password clears the
 * account-and-address count. Nothing is counted per account alone, so nobody elsewhere can lock
 * the owner out, and the e-mailed sign-in link is never held back by wrong passwords.
 *
 * Links. Requests for an e-mailed sign-in link are limited per account (`linksPerAccount` in
 * `linkWindowSeconds`, so an inbox is not flooded) and per address (`linksPerAddress`). A link
 * already sent keeps working.
 */
export interface ThrottlePolicy {
  freePerAccountAddress: number;
  freePerAddress: number;
  baseDelaySeconds: number;
  maxDelaySeconds: number;
  windowSeconds: number;
  linksPerAccount: number;
  linksPerAddress: number;
  linkWindowSeconds: number;
}

/** The wait before the next attempt after `failures` failures with `free` of them free. */
export function delayAfter(failures: number, free: number, policy: Pick<ThrottlePolicy, 'baseDelaySeconds' | 'maxDelaySeconds'>): number {
  if (failures <= free) return 0;
  const doublings = Math.min(failures - free - 1, 30);
  return Math.min(policy.baseDelaySeconds * 2 ** doublings, policy.maxDelaySeconds);
}

export interface ThrottleState {
  limited: boolean;
  /** Seconds until the next attempt is allowed (0 when not limited). */
  retryAfterSeconds: number;
  scope?: 'account_address' | 'address';
}

const PREFIX = 'lamina:signin';
const FREE: ThrottleState = { limited: false, retryAfterSeconds: 0 };

/** One set of limiters per Redis client and policy (rate-limiter-flexible defines a Lua command on the client). */
const cache = new WeakMap<Redis, Map<string, SignInThrottle>>();

export function signInThrottle(r: Redis, policy: ThrottlePolicy): SignInThrottle {
  let byPolicy = cache.get(r);
  if (!byPolicy) cache.set(r, (byPolicy = new Map()));
  const key = JSON.stringify(policy);
  let t = byPolicy.get(key);
  if (!t) byPolicy.set(key, (t = new SignInThrottle(r, policy)));
  return t;
}

export class SignInThrottle {
  private readonly failures: RateLimiterRedis;
  private readonly waits: RateLimiterRedis;
  private readonly linksByAccount: RateLimiterRedis;
  private readonly linksByAddress: RateLimiterRedis;

  constructor(
    r: Redis,
    private readonly policy: ThrottlePolicy,
  ) {
    // Failure counts: never "consumed out", only read; the key lives `windowSeconds`.
    this.failures = new RateLimiterRedis({ storeClient: r, keyPrefix: `${PREFIX}:fail`, points: Number.MAX_SAFE_INTEGER, duration: policy.windowSeconds });
    // The current wait of a key: blocked for the wait's length.
    this.waits = new RateLimiterRedis({ storeClient: r, keyPrefix: `${PREFIX}:wait`, points: 1, duration: 1 });
    this.linksByAccount = new RateLimiterRedis({ storeClient: r, keyPrefix: `${PREFIX}:link:acct`, points: policy.linksPerAccount, duration: policy.linkWindowSeconds });
    this.linksByAddress = new RateLimiterRedis({ storeClient: r, keyPrefix: `${PREFIX}:link:addr`, points: policy.linksPerAddress, duration: policy.linkWindowSeconds });
  }

  /** Whether a password attempt for `email` from `ip` must wait. Reads only. */
  async checkPassword(email: string, ip: string | null): Promise<ThrottleState> {
    const [pair, address] = await Promise.all([this.waits.get(pairKey(email, ip)), ip ? this.waits.get(addressKey(ip)) : null]);
    const waitOf = (res: RateLimiterRes | null) => (res && res.consumedPoints > 1 ? Math.max(1, Math.ceil(res.msBeforeNext / 1000)) : 0);
    const pairWait = waitOf(pair);
    const addressWait = waitOf(address);
    if (pairWait === 0 && addressWait === 0) return FREE;
    return pairWait >= addressWait
      ? { limited: true, retryAfterSeconds: pairWait, scope: 'account_address' }
      : { limited: true, retryAfterSeconds: addressWait, scope: 'address' };
  }

  /** Counts a wrong password; returns the wait it sets before the next attempt (0 while free). */
  async recordPasswordFailure(email: string, ip: string | null): Promise<number> {
    const counted = async (key: string, free: number) => {
      const res = await this.failures.penalty(key, 1);
      const delay = delayAfter(res.consumedPoints, free, this.policy);
      if (delay > 0) await this.waits.block(key, delay);
      return delay;
    };
    const waits = await Promise.all([
      counted(pairKey(email, ip), this.policy.freePerAccountAddress),
      ip ? counted(addressKey(ip), this.policy.freePerAddress) : 0,
    ]);
    return Math.max(...waits);
  }

  /** A correct password: this account's failures from this address are forgotten. */
  async clearPasswordFailures(email: string, ip: string | null): Promise<void> {
    const key = pairKey(email, ip);
    await Promise.all([this.failures.delete(key), this.waits.delete(key)]);
  }

  /** Takes one link request for `email` from `ip`; limited when either budget is spent. */
  async takeLinkRequest(email: string, ip: string | null): Promise<ThrottleState> {
    const take = async (limiter: RateLimiterRedis, key: string): Promise<number> => {
      try {
        await limiter.consume(key, 1);
        return 0;
      } catch (e) {
        if (e instanceof RateLimiterRes) return Math.max(1, Math.ceil(e.msBeforeNext / 1000));
        throw e;
      }
    };
    const addressWait = ip ? await take(this.linksByAddress, ip) : 0;
    if (addressWait > 0) return { limited: true, retryAfterSeconds: addressWait, scope: 'address' };
    const accountWait = await take(this.linksByAccount, email.trim().toLowerCase());
    if (accountWait > 0) return { limited: true, retryAfterSeconds: accountWait, scope: 'account_address' };
    return FREE;
  }
}

const pairKey = (email: string, ip: string | null) => `${email.trim().toLowerCase()}|${ip ?? 'unknown'}`;
const addressKey = (ip: string) => `addr|${ip}`;

/** "3 minutes", "45 seconds": a wait in words. */
export function waitText(seconds: number): string {
  if (seconds < 60) return `${seconds} second${seconds === 1 ? '' : 's'}`;
  const minutes = Math.ceil(seconds / 60);
  return `${minutes} minute${minutes === 1 ? '' : 's'}`;
}

/** What a throttled password attempt is told: what happened, how long, and the way that still works. */
export function passwordWaitMessage(state: ThrottleState): string {
  const who = state.scope === 'address' ? 'from your network' : 'for this account from your network';
  return `Too many wrong passwords ${who}, so Lamina slows down further tries. Wait ${waitText(state.retryAfterSeconds)} before the next try — or sign in with an e-mailed link, which still works. The account is not locked.`;
}

/** What a throttled link request is told. */
export function linkWaitMessage(state: ThrottleState): string {
  return `Too many sign-in links were asked for. Use the link already sent (it works for 24 hours), or ask again in ${waitText(state.retryAfterSeconds)}.`;
}
