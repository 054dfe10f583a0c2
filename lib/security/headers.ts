/**
 * Lamina's response security headers, defined once here: the fixed ones (next.config.mjs) and
 * those proxy.ts sets per response (CSP, HSTS). Pure: no Next, no env.
 *
 * Pages get a Content-Security-Policy with a fresh nonce per response (Next's documented Proxy
 * pattern: Next reads the nonce from the request's policy and puts it on its own scripts), with
 * 'strict-dynamic' and no 'unsafe-inline' for scripts. Styles allow inline style attributes
 * (charts and the sandboxed mail preview use them); a style attribute cannot run code.
 *
 * Every other response (the API, files) keeps the deny-all policy and HSTS that the web server
 * (scripts/web-server.mjs) puts on every response before Next answers; proxy.ts replaces the
 * policy for pages. Those two values live in response-policy.json, which the server reads too.
 */
import responsePolicy from './response-policy.json';

export interface HeaderOptions {
  nonce: string;
  /** The public URL is https: HSTS, and mixed content upgraded. */
  https: boolean;
  /** `next dev` needs eval for its error overlay; production never does. */
  dev: boolean;
}

export const PERMISSIONS_POLICY = [
  'accelerometer=()',
  'autoplay=()',
  'browsing-topics=()',
  'camera=()',
  'display-capture=()',
  'geolocation=()',
  'gyroscope=()',
  'hid=()',
  'magnetometer=()',
  'microphone=()',
  'midi=()',
  'payment=()',
  'serial=()',
  'usb=()',
].join(', ');

/** Two years, subdomains included (the HSTS preload list's minimum is one year). */
export const HSTS: string = responsePolicy.hsts;

export function pagePolicy({ nonce, https, dev }: HeaderOptions): string {
  return [
    "default-src 'self'",
    `script-src 'self' 'nonce-${nonce}' 'strict-dynamic'${dev ? " 'unsafe-eval'" : ''}`,
    "style-src 'self' 'unsafe-inline'",
    "img-src 'self' data: blob:",
    "font-src 'self'",
    "connect-src 'self'",
    "object-src 'none'",
    "base-uri 'self'",
    "form-action 'self'",
    "frame-ancestors 'none'",
    ...(https ? ['upgrade-insecure-requests'] : []),
  ].join('; ');
}

/** JSON and files: nothing in them may run or be framed. */
export const API_POLICY: string = responsePolicy.apiPolicy;

/**
 * Headers every response carries whatever the configuration: next.config.mjs sets them (also on
 * static files); tests/unit/security/headers.test.ts holds the two lists equal.
 */
export const STATIC_HEADERS: Record<string, string> = {
  'X-Frame-Options': 'DENY',
  'X-Content-Type-Options': 'nosniff',
  'Referrer-Policy': 'same-origin',
  'Permissions-Policy': PERMISSIONS_POLICY,
};

/**
 * The headers that depend on the request (a page's nonce) or the public URL (https): proxy.ts sets
 * the page's, the web server the API's (the same values, from response-policy.json).
 */
export function dynamicHeaders(kind: 'page' | 'api', o: HeaderOptions): Record<string, string> {
  return {
    'Content-Security-Policy': kind === 'page' ? pagePolicy(o) : API_POLICY,
    ...(o.https ? { 'Strict-Transport-Security': HSTS } : {}),
  };
}

/** A nonce: 128 random bits, base64. */
export function newNonce(): string {
  const bytes = new Uint8Array(16);
  crypto.getRandomValues(bytes);
  return btoa(String.fromCharCode(...bytes));
}
