import { env } from '@/lib/env';
import { clientAddress, type TrustedProxies } from '@/lib/security/trusted-proxies';

/** Where a request came from, for rate limits and the audit trail. */
export interface Origin {
  ip: string | null;
  userAgent: string | null;
}

type HeaderSource = { get(name: string): string | null } | Record<string, string | string[] | undefined>;

function header(h: HeaderSource, name: string): string | null {
  if (typeof (h as { get?: unknown }).get === 'function') return (h as { get(n: string): string | null }).get(name);
  const v = (h as Record<string, string | string[] | undefined>)[name];
  return Array.isArray(v) ? v.join(', ') : (v ?? null);
}

/**
 * The address is the socket's (the last X-Forwarded-For entry, which the web server appends),
 * unless TRUSTED_PROXIES says proxies stand in front: see lib/security/trusted-proxies.ts.
 */
export function originFrom(h: HeaderSource, trust: TrustedProxies = env.trustedProxies): Origin {
  const ip = clientAddress(header(h, 'x-forwarded-for'), trust);
  return { ip: ip ? ip.slice(0, 64) : null, userAgent: header(h, 'user-agent')?.slice(0, 300) ?? null };
}
