import { NextResponse, type NextRequest } from 'next/server';
import { dynamicHeaders, newNonce } from '@/lib/security/headers';

/**
 * Next 16's Proxy (formerly middleware), run before every page: the per-response security headers
 * of lib/security/headers.ts — a Content-Security-Policy with a fresh nonce, and HSTS when the public
 * URL (APP_URL) is https. The nonce also goes on the request's Content-Security-Policy, where Next
 * reads it while rendering and puts it on its own scripts (the root layout reads the headers, so
 * every page renders per request). API routes skip it: the web server (scripts/web-server.mjs) has
 * already given every response the API's deny-all policy and HSTS, and running the proxy cost each
 * API request about 1 ms of the web server's CPU (`npm run bench -- load`, issue 15). The fixed
 * headers are in next.config.mjs. Access control is NOT done here: every page and route asks for its own.
 */
export function proxy(request: NextRequest) {
  const headers = dynamicHeaders('page', {
    nonce: newNonce(),
    https: (process.env.APP_URL ?? '').startsWith('https:'),
    dev: process.env.NODE_ENV === 'development',
  });
  const requestHeaders = new Headers(request.headers);
  requestHeaders.set('Content-Security-Policy', headers['Content-Security-Policy']!);
  const response = NextResponse.next({ request: { headers: requestHeaders } });
  for (const [k, v] of Object.entries(headers)) response.headers.set(k, v);
  return response;
}

export const config = {
  matcher: [
    {
      // Every page: not the API, the build's static files and the public images (they carry next.config's headers).
      source: '/((?!api/|_next/static|_next/image|favicon.ico|lamina-mark.svg).*)',
      missing: [
        { type: 'header', key: 'next-router-prefetch' },
        { type: 'header', key: 'purpose', value: 'prefetch' },
      ],
    },
  ],
};
