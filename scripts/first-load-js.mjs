#!/usr/bin/env node
/**
 * First Load JS of routes, as `next build` used to print it: the JavaScript a browser loads on a
 * first visit (every <script src> in the served HTML), summed gzip size. Next 16's build output no
 * longer prints the column, so this reads the served page and the built files.
 *
 *   node scripts/first-load-js.mjs http://127.0.0.1:3000 /sign-in /
 * (for a signed-in route, pass a session cookie in LAMINA_COOKIE)
 *
 * Scripts marked `nomodule` (Next's legacy polyfills) are listed apart and left out of the sum:
 * every browser that runs ES modules skips them without downloading them. "with nomodule" is the
 * sum as this script reported it before.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { gzipSync } from 'node:zlib';

const [base, ...routes] = process.argv.slice(2);
if (!base || routes.length === 0) {
  console.error('usage: first-load-js.mjs BASE_URL ROUTE...');
  process.exit(2);
}
const distDir = process.env.NEXT_DIST_DIR || '.next';
const kb = (n) => `${(n / 1024).toFixed(1)} kB`;

for (const route of routes) {
  const res = await fetch(new URL(route, base), { headers: process.env.LAMINA_COOKIE ? { cookie: process.env.LAMINA_COOKIE } : {}, redirect: 'manual' });
  const html = await res.text();
  const tags = [...new Map([...html.matchAll(/<script[^>]+src="([^"]+)"[^>]*>/g)].map((m) => [m[1], /\bnomodule\b/i.test(m[0])])).entries()];
  let raw = 0;
  let gz = 0;
  let legacy = 0;
  for (const [src, noModule] of tags) {
    const rel = decodeURIComponent(new URL(src, base).pathname).replace(/^\/_next\//, '');
    const file = readFileSync(path.join(distDir, rel));
    const size = gzipSync(file).length;
    if (noModule) {
      legacy += size;
      continue;
    }
    raw += file.length;
    gz += size;
  }
  const modern = tags.filter(([, noModule]) => !noModule).length;
  console.log(
    `${route.padEnd(12)} status ${res.status}  ${modern} scripts  First Load JS ${kb(gz)} gzip (${kb(raw)} raw)` +
      (legacy ? `  [+ nomodule ${kb(legacy)}; with nomodule ${kb(gz + legacy)}]` : ''),
  );
}
