/**
 * Which address a request came from, for the sign-in limits and the audit trail.
 *
 * The web server (scripts/web-server.mjs) appends the socket's peer address to X-Forwarded-For,
 * as every proxy does, so the header's last entry is always the address that connected to Lamina.
 * Entries before it were written by whoever sent the request — a client can put anything there.
 * They are read only as far as TRUSTED_PROXIES says: a count of proxies in front of Lamina (skip
 * that many entries from the right) or a list of their addresses (skip entries that are one of
 * them, from the right). Unset or 0: the socket's address, whatever the client sent.
 */
export type TrustedProxies = { count: number } | { addresses: string[] };

export const NO_PROXIES: TrustedProxies = { count: 0 };

/** Parses TRUSTED_PROXIES: empty or a whole number (a count), or a comma-separated list of addresses. */
export function parseTrustedProxies(raw: string | undefined): TrustedProxies | { error: string } {
  const value = (raw ?? '').trim();
  if (value === '') return NO_PROXIES;
  if (/^\d+$/.test(value)) {
    const count = Number(value);
    return count <= 20 ? { count } : { error: 'a count of proxies is at most 20' };
  }
  const addresses = value.split(',').map((a) => normalise(a.trim()));
  if (addresses.some((a) => !/^[0-9a-f.:]+$/i.test(a) || a.length > 45)) {
    return { error: 'give a count of proxies, or their IP addresses separated by commas' };
  }
  return { addresses };
}

/** `::ffff:10.0.0.1` (IPv4 on an IPv6 socket) is 10.0.0.1; lower case. */
function normalise(address: string): string {
  const a = address.toLowerCase();
  return a.startsWith('::ffff:') && a.includes('.') ? a.slice(7) : a;
}

/** The client's address from X-Forwarded-For as the web server completed it; null when absent. */
export function clientAddress(forwardedFor: string | null, trust: TrustedProxies): string | null {
  const chain = (forwardedFor ?? '')
    .split(',')
    .map((e) => normalise(e.trim()))
    .filter(Boolean);
  if (chain.length === 0) return null;
  if ('count' in trust) return chain[Math.max(0, chain.length - 1 - trust.count)]!;
  for (let i = chain.length - 1; i >= 0; i--) {
    if (!trust.addresses.includes(chain[i]!)) return chain[i]!;
  }
  return chain[0]!;
}
