/**
 * npm run backup [-- DIR]: the database (pg_dump, custom format) and every object of the bucket
 * (through the S3 API) into DIR (default backups/lamina-<UTC time>), with DIR/manifest.json:
 * sizes and sha256 of every file, the row count of every table, the newest migration. The row
 * counts and the dump read one snapshot (pg_export_snapshot). manifest.json is written last: a
 * directory without one is an interrupted backup, and `npm run restore` refuses it.
 *
 * Reads DATABASE_URL and S3_* like the app (lib/env.ts; the defaults are `npm start`'s).
 */
import { runUnderScriptsTsconfig } from './lib/scripts-tsconfig';

await runUnderScriptsTsconfig(import.meta.url);

const { mkdir, readdir, rename, writeFile } = await import('node:fs/promises');
const { createWriteStream } = await import('node:fs');
const path = await import('node:path');
const { pipeline } = await import('node:stream/promises');
const { GetObjectCommand, ListObjectsV2Command } = await import('@aws-sdk/client-s3');
const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../mikro-orm.config');
const { env } = await import('../lib/env');
const { s3 } = await import('../lib/storage/s3');
const { MANIFEST_VERSION, objectFile } = await import('../lib/backup/manifest');
const { countRows, digestFile, hashingStream, lastMigration, pgConnection, run } = await import('./lib/backup-io');
type Manifest = import('../lib/backup/manifest').Manifest;

const stamp = new Date().toISOString().replace(/[:]/g, '-').replace(/\.\d+Z$/, 'Z');
const dir = path.resolve(process.argv[2] ?? path.join('backups', `lamina-${stamp}`));
await mkdir(dir, { recursive: true });
if ((await readdir(dir)).length > 0) {
  console.error(`backup refused: ${dir} is not empty (give a new directory)`);
  process.exit(2);
}
const t0 = Date.now();

// 1. The database: counts and dump in one snapshot, held open by this transaction.
const orm = await MikroORM.init({ ...config, clientUrl: env.DATABASE_URL, debug: false });
let database: Manifest['database'];
try {
  const knex = orm.em.getConnection().getKnex();
  database = await knex.transaction(
    async (trx) => {
      const snapshot = String((await trx.raw('select pg_export_snapshot() as s')).rows[0].s);
      const rowCounts = await countRows(trx);
      const migration = await lastMigration(trx);
      const { dbname, env: pgEnv } = pgConnection(env.DATABASE_URL);
      const file = 'db.dump';
      await run('pg_dump', ['--format=custom', '--no-owner', '--no-privileges', `--snapshot=${snapshot}`, `--file=${path.join(dir, file)}`, `--dbname=${dbname}`], pgEnv);
      const digest = (await digestFile(path.join(dir, file)))!;
      const version = (await run('pg_dump', ['--version'])).trim();
      return { file, ...digest, format: 'pg_dump custom' as const, pgDumpVersion: version, lastMigration: migration, rowCounts };
    },
    { isolationLevel: 'repeatable read', readOnly: true },
  );
} finally {
  await orm.close(true);
}

// 2. The objects, streamed to files and hashed on the way.
const items: Manifest['objects']['items'] = [];
let token: string | undefined;
do {
  const page = await s3().send(new ListObjectsV2Command({ Bucket: env.S3_BUCKET, ContinuationToken: token }));
  for (const o of page.Contents ?? []) {
    const key = o.Key!;
    const file = objectFile(key);
    const got = await s3().send(new GetObjectCommand({ Bucket: env.S3_BUCKET, Key: key }));
    await mkdir(path.dirname(path.join(dir, file)), { recursive: true });
    const h = hashingStream();
    await pipeline(got.Body as import('node:stream').Readable, h.stream, createWriteStream(path.join(dir, file)));
    items.push({ key, file, ...h.digest(), contentType: got.ContentType ?? null });
  }
  token = page.IsTruncated ? page.NextContinuationToken : undefined;
} while (token);

// 3. The manifest, last.
const manifest: Manifest = {
  lamina: 'backup',
  version: MANIFEST_VERSION,
  createdAt: new Date().toISOString(),
  database,
  objects: { bucket: env.S3_BUCKET, items },
};
await writeFile(path.join(dir, 'manifest.json.part'), JSON.stringify(manifest, null, 2) + '\n');
await rename(path.join(dir, 'manifest.json.part'), path.join(dir, 'manifest.json'));

const rows = Object.values(database.rowCounts).reduce((a, b) => a + b, 0);
const bytes = items.reduce((a, b) => a + b.size, 0);
console.log(
  `backup: ${dir}\n  database ${database.size} bytes (${Object.keys(database.rowCounts).length} tables, ${rows} rows; last migration ${database.lastMigration ?? 'none'})\n  objects ${items.length} (${bytes} bytes) from bucket ${env.S3_BUCKET}\n  took ${((Date.now() - t0) / 1000).toFixed(1)} s`,
);
