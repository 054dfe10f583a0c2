/**
 * npm run restore -- DIR [--replace]: puts back a backup made by `npm run backup`.
 *
 *   1. reads DIR/manifest.json and checks the size and sha256 of every file it lists, before
 *      anything is touched: any mismatch (or a missing file) refuses the restore and says which
 *   2. refuses a database that holds practices unless --replace is given (a restore replaces it)
 *   3. pg_restore --clean --if-exists in one transaction, then counts the rows of every table
 *      against the manifest
 *   4. the bucket made equal to the backup: every object written back, any other object removed
 *
 * After a restore into newer code, run `npm run migrate` (the manifest says the backup's last
 * migration). Reads DATABASE_URL and S3_* like the app (lib/env.ts).
 */
import { runUnderScriptsTsconfig } from './lib/scripts-tsconfig';

await runUnderScriptsTsconfig(import.meta.url);

const { readFile } = await import('node:fs/promises');
const path = await import('node:path');
const { DeleteObjectCommand, ListObjectsV2Command, PutObjectCommand } = await import('@aws-sdk/client-s3');
const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../mikro-orm.config');
const { env } = await import('../lib/env');
const { s3 } = await import('../lib/storage/s3');
const { fileProblem, manifestFiles, parseManifest, rowCountDifferences } = await import('../lib/backup/manifest');
const { countRows, digestFile, pgConnection, run } = await import('./lib/backup-io');

function refuse(message: string): never {
  console.error(`restore refused: ${message}`);
  process.exit(2);
}

const args = process.argv.slice(2);
const replace = args.includes('--replace');
const dirArg = args.find((a) => !a.startsWith('--'));
if (!dirArg) refuse('give the backup directory: npm run restore -- DIR [--replace]');
const dir = path.resolve(dirArg);
const t0 = Date.now();

// 1. The manifest and every file's checksum, first.
let text: string;
try {
  text = await readFile(path.join(dir, 'manifest.json'), 'utf8');
} catch {
  refuse(`${dir} has no manifest.json (not a backup, or an interrupted one)`);
}
let manifest: ReturnType<typeof parseManifest>;
try {
  manifest = parseManifest(text);
} catch (e) {
  refuse((e as Error).message);
}
const problems: string[] = [];
for (const f of manifestFiles(manifest)) {
  const p = fileProblem(f, await digestFile(path.join(dir, f.file)));
  if (p) problems.push(p);
}
if (problems.length) refuse(`the backup in ${dir} does not match its manifest; nothing was changed:\n  ${problems.slice(0, 20).join('\n  ')}${problems.length > 20 ? `\n  … and ${problems.length - 20} more` : ''}`);
console.log(`restore: ${manifestFiles(manifest).length} files match the manifest of ${manifest.createdAt}`);

// 2. and 3. The database.
const orm = await MikroORM.init({ ...config, clientUrl: env.DATABASE_URL, debug: false });
try {
  const knex = orm.em.getConnection().getKnex();
  const practices = await knex
    .raw(`select count(*)::int as n from practice`)
    .then((r: { rows: { n: number }[] }) => r.rows[0]!.n)
    .catch(() => 0);
  if (practices > 0 && !replace) refuse(`the database holds ${practices} practice(s); add --replace to replace it with the backup`);
  const { dbname, env: pgEnv } = pgConnection(env.DATABASE_URL);
  await run('pg_restore', ['--clean', '--if-exists', '--no-owner', '--no-privileges', '--single-transaction', '--exit-on-error', `--dbname=${dbname}`, path.join(dir, manifest.database.file)], pgEnv);
  const differences = rowCountDifferences(manifest.database.rowCounts, await countRows(knex));
  if (differences.length) {
    console.error(`restore: the restored database's row counts differ from the manifest:\n  ${differences.join('\n  ')}`);
    process.exit(1);
  }
} finally {
  await orm.close(true);
}
const rows = Object.values(manifest.database.rowCounts).reduce((a, b) => a + b, 0);
console.log(`restore: database restored, ${rows} rows in ${Object.keys(manifest.database.rowCounts).length} tables match the manifest (last migration ${manifest.database.lastMigration ?? 'none'})`);

// 4. The bucket.
const wanted = new Set(manifest.objects.items.map((o) => o.key));
for (const o of manifest.objects.items) {
  await s3().send(
    // The bytes in one buffer, as lib/storage/s3.ts writes them: a stream body goes out in the SDK's
    // aws-chunked encoding, which some S3-compatible stores (the local fake) keep as the object.
    new PutObjectCommand({ Bucket: env.S3_BUCKET, Key: o.key, Body: await readFile(path.join(dir, o.file)), ContentLength: o.size, ContentType: o.contentType ?? undefined }),
  );
}
let removed = 0;
let token: string | undefined;
const extra: string[] = [];
do {
  const page = await s3().send(new ListObjectsV2Command({ Bucket: env.S3_BUCKET, ContinuationToken: token }));
  for (const o of page.Contents ?? []) if (!wanted.has(o.Key!)) extra.push(o.Key!);
  token = page.IsTruncated ? page.NextContinuationToken : undefined;
} while (token);
for (const Key of extra) {
  // One request per key: the multi-object delete needs a body checksum the local fake does not take.
  await s3().send(new DeleteObjectCommand({ Bucket: env.S3_BUCKET, Key }));
  removed++;
}
console.log(`restore: ${manifest.objects.items.length} objects written to bucket ${env.S3_BUCKET}${removed ? `, ${removed} not in the backup removed` : ''}; took ${((Date.now() - t0) / 1000).toFixed(1)} s`);
