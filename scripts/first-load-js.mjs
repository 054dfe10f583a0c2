#!/usr/bin/env node
/**
 * First Load JS of routes, as `next build` used to print it: the JavaScript a browser loads on a
 * first visit (every <script src> in the served HTML), summed gzip size. Next 16's build output no
 * longer prints the column, so this reads the served page and the built files.
 *
 *   node scripts/first-load-js.mjs http://127.0.0.1:3000 /sign-in /
 * (for a signed-in route, pass a session cookie in LAMINA_COOKIE)
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
  const srcs = [...new Set([...html.matchAll(/<script[^>]+src="([^"]+)"/g)].map((m) => m[1]))];
  let raw = 0;
  let gz = 0;
  for (const src of srcs) {
    const rel = decodeURIComponent(new URL(src, base).pathname).replace(/^\/_next\//, '');
    const file = readFileSync(path.join(distDir, rel));
    raw += file.length;
    gz += gzipSync(file).length;
  }
  console.log(`${route.padEnd(12)} status ${res.status}  ${srcs.length} scripts  First Load JS ${kb(gz)} gzip (${kb(raw)} raw)`);
}
