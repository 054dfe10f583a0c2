/**
 * Lamina's web server: Next's request handler behind a plain Node HTTP server (Next's documented
 * custom server), for one reason — the address a request came from. `next start` keeps whatever
 * X-Forwarded-For a client sends and only fills it in when absent, so the socket's address is
 * lost exactly when someone forges the header. Here every request's X-Forwarded-For gets the
 * socket's peer address appended, as a proxy would; lib/security/trusted-proxies.ts reads it from
 * the right, as far as TRUSTED_PROXIES allows.
 *
 * Every response also starts with the API's deny-all Content-Security-Policy (and HSTS when the
 * public URL is https: lib/security/response-policy.json); proxy.ts, run for pages only, replaces
 * the policy with the page's nonce policy.
 *
 *   node scripts/web-server.mjs -H 127.0.0.1 -p 3000     (NEXT_DIST_DIR picks the build)
 */
import http from 'node:http';
import path from 'node:path';
import { parseArgs } from 'node:util';
import next from 'next';
import responsePolicy from '../lib/security/response-policy.json' with { type: 'json' };

const { values } = parseArgs({
  options: { hostname: { type: 'string', short: 'H', default: '127.0.0.1' }, port: { type: 'string', short: 'p', default: '3000' } },
  strict: true,
});
const hostname = values.hostname;
const port = Number(values.port);
const dir = path.resolve(import.meta.dirname, '..');

const app = next({ dev: false, dir, hostname, port });
const handle = app.getRequestHandler();
await app.prepare();

const baseline = [
  ['Content-Security-Policy', responsePolicy.apiPolicy],
  ...((process.env.APP_URL ?? '').startsWith('https:') ? [['Strict-Transport-Security', responsePolicy.hsts]] : []),
];

const server = http.createServer((req, res) => {
  for (const [name, value] of baseline) res.setHeader(name, value);
  const peer = req.socket.remoteAddress ?? '';
  const sent = req.headers['x-forwarded-for'];
  const prior = Array.isArray(sent) ? sent.join(', ') : sent;
  req.headers['x-forwarded-for'] = prior ? `${prior}, ${peer}` : peer;
  handle(req, res).catch((e) => {
    console.error('[web] unhandled error', e);
    if (!res.headersSent) res.writeHead(500, { 'content-type': 'text/plain; charset=utf-8' });
    res.end('Something went wrong on our side.');
  });
});
// An idle keep-alive connection is kept 65 s, not Node's 5 s. A client that sends on one just as the
// server closes it gets a reset (ECONNRESET) instead of an answer; a proxy in front keeps idle
// upstream connections for up to about a minute, so the server outlasts it (common practice). The
// headers' deadline stays above it, as Node requires.
server.keepAliveTimeout = 65_000;
server.headersTimeout = 66_000;
server.on('error', (e) => {
  // A taken port ends the process: a launcher waiting for the port must not find someone else's server.
  console.error(`lamina: web server: ${e.message}`);
  process.exit(1);
});
server.listen(port, hostname, () => console.log(`lamina: web server on http://${hostname}:${port}`));

let stopping = false;
for (const signal of ['SIGINT', 'SIGTERM']) {
  process.on(signal, () => {
    if (stopping) return;
    stopping = true;
    server.close(() => process.exit(0));
    server.closeAllConnections();
    setTimeout(() => process.exit(0), 5000).unref();
  });
}
