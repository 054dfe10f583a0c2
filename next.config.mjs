/** @type {import('next').NextConfig} */
const nextConfig = {
  distDir: process.env.NEXT_DIST_DIR || '.next',
  poweredByHeader: false,
  // Read on the server only (lib/import/read.ts loads it on demand); kept out of the bundle.
  serverExternalPackages: ['exceljs'],
  // forbidden() and app/forbidden.tsx: pages answer 403 with Lamina's own page.
  // proxyClientMaxBodySize: proxy.ts runs on every request and Next buffers a body for it up to
  // this size, cutting longer ones short (10 MB by default): a film upload may be up to FILM_MAX_MB
  // (lib/env.ts, at most 60) plus the multipart framing.
  experimental: { authInterrupts: true, proxyClientMaxBodySize: '64mb' },
  // The registry is health data: never let a page be framed or sniffed. These are
  // lib/security/headers.ts's STATIC_HEADERS (a unit test holds them equal); the CSP with its
  // nonce and HSTS are set per response by proxy.ts.
  async headers() {
    return [
      {
        source: '/:path*',
        headers: [
          { key: 'X-Frame-Options', value: 'DENY' },
          { key: 'X-Content-Type-Options', value: 'nosniff' },
          { key: 'Referrer-Policy', value: 'same-origin' },
          {
            key: 'Permissions-Policy',
            value:
              'accelerometer=(), autoplay=(), browsing-topics=(), camera=(), display-capture=(), geolocation=(), gyroscope=(), hid=(), magnetometer=(), microphone=(), midi=(), payment=(), serial=(), usb=()',
          },
        ],
      },
    ];
  },
};

export default nextConfig;
