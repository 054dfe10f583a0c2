/**
 * The checks every state-changing route handler makes before anything else (lib/http.ts calls
 * them once, in `handler()`): the request must come from Lamina's own pages, and its body must be
 * of a type a page of another site cannot send without the browser asking first.
 *
 * Pure: no Next, no env. `allowedOrigin` is the public URL's origin (APP_URL).
 */

const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS']);

export type BodyType = 'application/json' | 'multipart/form-data' | 'text/csv';

export interface Refusal {
  status: 403 | 415;
  error: 'cross_site' | 'unsupported_media_type';
  message: string;
}

type Headers = { get(name: string): string | null };

/**
 * A write must carry `Origin` equal to Lamina's own origin (browsers send it on every
 * POST/PUT/PATCH/DELETE, same-origin included) and, when the browser sends Fetch Metadata,
 * `Sec-Fetch-Site: same-origin`. A missing Origin is refused too: no page of ours sends one.
 */
export function crossSiteRefusal(method: string, headers: Headers, allowedOrigin: string): Refusal | null {
  if (SAFE_METHODS.has(method.toUpperCase())) return null;
  const site = headers.get('sec-fetch-site');
  const origin = headers.get('origin');
  if ((site !== null && site !== 'same-origin') || origin === null || origin !== allowedOrigin) {
    return {
      status: 403,
      error: 'cross_site',
      message: 'This change must be made from Lamina’s own pages. Nothing was changed.',
    };
  }
  return null;
}

/**
 * A write that carries a body must declare one of the accepted types (JSON by default). A body
 * sent as text/plain or a form — what another site's page can post without a preflight — is
 * refused before it is read.
 */
export function bodyTypeRefusal(method: string, headers: Headers, accepted: readonly BodyType[]): Refusal | null {
  if (SAFE_METHODS.has(method.toUpperCase())) return null;
  const length = headers.get('content-length');
  const hasBody = headers.get('transfer-encoding') !== null || (length !== null && length !== '0');
  const type = (headers.get('content-type') ?? '').split(';')[0]!.trim().toLowerCase();
  if (!hasBody) return null;
  if (accepted.includes(type as BodyType)) return null;
  return {
    status: 415,
    error: 'unsupported_media_type',
    message: `Send the body as ${accepted.join(' or ')}. Nothing was changed.`,
  };
}

/** The origin of a URL, e.g. `https://lamina.example` for `https://lamina.example/x`. */
export const originOf = (url: string) => new URL(url).origin;
