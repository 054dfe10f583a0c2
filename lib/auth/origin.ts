/** Where a request came from, for rate limits and the audit trail. */
export interface Origin {
  ip: string | null;
  userAgent: string | null;
}

type HeaderSource = { get(name: string): string | null } | Record<string, string | string[] | undefined>;

function header(h: HeaderSource, name: string): string | null {
  if (typeof (h as { get?: unknown }).get === 'function') return (h as { get(n: string): string | null }).get(name);
  const v = (h as Record<string, string | string[] | undefined>)[name];
  return Array.isArray(v) ? (v[0] ?? null) : (v ?? null);
}

export function originFrom(h: HeaderSource): Origin {
  const forwarded = header(h, 'x-forwarded-for')?.split(',')[0]?.trim();
  const ip = forwarded || header(h, 'x-real-ip') || null;
  return { ip: ip ? ip.slice(0, 64) : null, userAgent: header(h, 'user-agent')?.slice(0, 300) ?? null };
}
