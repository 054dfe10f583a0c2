/**
 * The local S3 fake for films (demo and tests only): `s3rver` on loopback, objects as files under
 * --dir, the bucket created at start. Started and stopped by scripts/lib/services.sh (s3_start /
 * s3_stop) like the mail fake; the app reaches it through S3_URL with path-style addressing and the
 * fake's fixed credentials S3RVER / S3RVER (lib/storage/s3.ts).
 *
 *   node --import tsx scripts/s3-fake.ts --port 4569 --dir .data/s3 --bucket lamina-films [--pid-file F]
 *
 * Ready when `GET http://127.0.0.1:PORT/BUCKET` answers 200 (an anonymous listing; s3rver checks a
 * signature only when a request carries one).
 */
import { promises as fs } from 'node:fs';
import { parseArgs } from 'node:util';
import S3rver from 's3rver';

const { values } = parseArgs({
  args: process.argv.slice(2),
  options: {
    port: { type: 'string' },
    dir: { type: 'string' },
    bucket: { type: 'string', default: 'lamina-films' },
    'pid-file': { type: 'string' },
  },
});

const port = Number(values.port);
if (!Number.isInteger(port) || port <= 0 || port > 65535) throw new Error('s3-fake: --port must be a port number');
if (!values.dir) throw new Error('s3-fake: --dir is required');
const bucket = values.bucket!;
if (!/^[a-z0-9][a-z0-9.-]{1,61}[a-z0-9]$/.test(bucket)) throw new Error('s3-fake: --bucket is not a valid bucket name');

await fs.mkdir(values.dir, { recursive: true });
const server = new S3rver({
  port,
  address: '127.0.0.1',
  directory: values.dir,
  silent: true,
  configureBuckets: [{ name: bucket, configs: [] }],
});
await server.run();
if (values['pid-file']) await fs.writeFile(values['pid-file'], `${process.pid}\n`);
console.log(`s3-fake: http://127.0.0.1:${port}/${bucket} (objects in ${values.dir})`);

let stopping = false;
async function stop() {
  if (stopping) return;
  stopping = true;
  await server.close().catch(() => {});
  if (values['pid-file']) await fs.rm(values['pid-file'], { force: true });
  process.exit(0);
}
process.on('SIGTERM', stop);
process.on('SIGINT', stop);
