/**
 * Where to send someone after signing in: only a path on Lamina itself. Anything else — another
 * host (`//evil.example`, `/\evil.example`, `https:…`), a scheme (`javascript:`), a control
 * character browsers strip (`/\t/evil.example`), or any of these percent-encoded — gives the
 * fallback. Used by the sign-in page's server redirect, its client `router.replace` and
 * next-auth's redirect callback. Pure: runs on the server and in the browser.
 */
const BASE = 'http://lamina.invalid';
const CONTROL = /[\u0000-\u001f\u007f]/;

function looksLocal(s: string): boolean {
  return s.startsWith('/') && !s.startsWith('//') && !s.includes('\\') && !CONTROL.test(s);
}

export function safeReturnPath(raw: unknown, fallback = '/'): string {
  if (typeof raw !== 'string' || raw.length === 0 || raw.length > 2048) return fallback;
  // Every decoding of the value must still be a local path (a browser or proxy may decode it).
  let decoded = raw;
  for (let i = 0; i < 4; i++) {
    if (!looksLocal(decoded)) return fallback;
    let next: string;
    try {
      next = decodeURIComponent(decoded);
    } catch {
      return fallback;
    }
    if (next === decoded) break;
    decoded = next;
  }
  if (!looksLocal(decoded)) return fallback;
  let url: URL;
  try {
    url = new URL(raw, BASE);
  } catch {
    return fallback;
  }
  if (url.origin !== BASE) return fallback;
  return `${url.pathname}${url.search}${url.hash}`;
}
