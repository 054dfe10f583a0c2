import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn } from 'node:child_process';
import { createHash, randomBytes } from 'node:crypto';
import { cp, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { DeleteObjectCommand, GetObjectCommand, ListObjectsV2Command, PutObjectCommand, S3Client } from '@aws-sdk/client-s3';
import { env } from '@/lib/env';
import { parseManifest } from '@/lib/backup/manifest';
import { seedDemo } from '@/lib/demo/seed-demo';
import { outcomesOverview } from '@/lib/services/outcomes';
import { invalidateOutcomeCases } from '@/lib/services/outcomes-cache';
import type { Actor } from '@/lib/auth/actor';
import { countRows } from '../../scripts/lib/backup-io';
import { openServices, resetData } from '../support/db';

/**
 * Issue 15: `npm run backup` and `npm run restore` (the real scripts, as child processes) on the
 * seeded demo world plus a few objects in the bucket: backed up, wiped, restored, then compared —
 * every table's row count, every object's sha256, and the outcomes overview's figures. A backup
 * whose file was altered is refused before anything is touched.
 */
const services = await openServices();
const root = path.resolve(import.meta.dirname, '../..');
let work: string;
afterAll(async () => {
  await services.close();
  if (work) await rm(work, { recursive: true, force: true });
});

const s3 = new S3Client({ endpoint: env.S3_URL, forcePathStyle: true, region: env.S3_REGION, credentials: { accessKeyId: env.S3_ACCESS_KEY_ID, secretAccessKey: env.S3_SECRET_ACCESS_KEY } });
const sha256 = (b: Uint8Array) => createHash('sha256').update(b).digest('hex');

async function bucketDigests(): Promise<Record<string, string>> {
  const out: Record<string, string> = {};
  let token: string | undefined;
  do {
    const page = await s3.send(new ListObjectsV2Command({ Bucket: env.S3_BUCKET, ContinuationToken: token }));
    for (const o of page.Contents ?? []) {
      const got = await s3.send(new GetObjectCommand({ Bucket: env.S3_BUCKET, Key: o.Key! }));
      out[o.Key!] = sha256(await got.Body!.transformToByteArray());
    }
    token = page.IsTruncated ? page.NextContinuationToken : undefined;
  } while (token);
  return out;
}

async function emptyBucket() {
  for (const key of Object.keys(await bucketDigests())) await s3.send(new DeleteObjectCommand({ Bucket: env.S3_BUCKET, Key: key }));
}

/** Runs one of the scripts as `npm run` does; resolves with its exit code and output. */
function script(name: 'backup' | 'restore', args: string[]): Promise<{ code: number | null; out: string }> {
  return new Promise((resolve) => {
    const p = spawn(process.execPath, [path.join(root, 'node_modules/tsx/dist/cli.mjs'), '--tsconfig', path.join(root, 'scripts/tsconfig.json'), path.join(root, `scripts/${name}.ts`), ...args], {
      cwd: root,
      env: process.env,
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let out = '';
    p.stdout.on('data', (d: Buffer) => (out += d.toString()));
    p.stderr.on('data', (d: Buffer) => (out += d.toString()));
    p.on('close', (code) => resolve({ code, out }));
  });
}

const rowCounts = () => countRows(services.orm.em.getConnection().getKnex());

let actor: Actor;
async function overviewFigures() {
  invalidateOutcomeCases();
  const r = await outcomesOverview(services.em(), actor, {});
  return r.overview;
}

let beforeCounts: Record<string, number>;
let beforeObjects: Record<string, string>;
let beforeOverview: Awaited<ReturnType<typeof overviewFigures>>;
let backupDir: string;

beforeAll(async () => {
  work = await mkdtemp(path.join(os.tmpdir(), 'lamina-backup-test-'));
  await resetData(services.orm, services.redis);
  await emptyBucket();
  const seeded = await seedDemo(services.em());
  const auditor = seeded.users.find((u) => u.role === 'auditor') ?? seeded.users.find((u) => u.role === 'clinician')!;
  const user = (await services.orm.em.getConnection().execute<{ id: string }[]>(`select id from app_user where email = ?`, [auditor.email]))[0]!;
  actor = { userId: user.id, email: auditor.email, name: null, practiceId: seeded.practiceId, practiceName: seeded.practiceName, roles: [auditor.role as Actor['roles'][number]], ip: '127.0.0.9', userAgent: 'vitest' };
  // A few objects (invented bytes) where the films live; one key with a space and a nested path.
  for (const [i, key] of [`practices/${seeded.practiceId}/cases/demo/film one.png`, `practices/${seeded.practiceId}/cases/demo/r/a.webp`, 'practices/x/y/z.dcm'].entries()) {
    await s3.send(new PutObjectCommand({ Bucket: env.S3_BUCKET, Key: key, Body: randomBytes(1000 + i * 5000), ContentType: i === 2 ? 'application/dicom' : 'image/png' }));
  }
  beforeOverview = await overviewFigures();
  beforeCounts = await rowCounts();
  beforeObjects = await bucketDigests();
  backupDir = path.join(work, 'backup');
}, 300_000);

describe('backup and restore (scripts/backup.ts, scripts/restore.ts)', () => {
  it('backs up the database and the bucket with a manifest of sizes, checksums and row counts', async () => {
    const r = await script('backup', [backupDir]);
    expect(r.code, r.out).toBe(0);
    const m = parseManifest(await readFile(path.join(backupDir, 'manifest.json'), 'utf8'));
    expect(m.database.rowCounts).toEqual(beforeCounts);
    expect(Object.fromEntries(m.objects.items.map((o) => [o.key, o.sha256]))).toEqual(beforeObjects);
    expect(m.database.lastMigration).toMatch(/^Migration\d+/);
    expect(beforeCounts.treatment_case).toBeGreaterThan(0);
  }, 240_000);

  it('refuses a backup whose file does not match its checksum, and changes nothing', async () => {
    const bad = path.join(work, 'tampered');
    await cp(backupDir, bad, { recursive: true });
    const m = parseManifest(await readFile(path.join(bad, 'manifest.json'), 'utf8'));
    const victim = path.join(bad, m.objects.items[0]!.file);
    const bytes = await readFile(victim);
    bytes[10] = bytes[10]! ^ 0xff; // same size, other bytes
    await writeFile(victim, bytes);
    const r = await script('restore', [bad, '--replace']);
    expect(r.code).toBe(2);
    expect(r.out).toContain('restore refused: the backup');
    expect(r.out).toContain(`${m.objects.items[0]!.file}: checksum mismatch`);
    expect(await rowCounts()).toEqual(beforeCounts);
  }, 120_000);

  it('refuses to replace a database holding practices unless told --replace', async () => {
    const r = await script('restore', [backupDir]);
    expect(r.code).toBe(2);
    expect(r.out).toMatch(/holds \d+ practice\(s\); add --replace/);
  }, 120_000);

  it('after a wipe, restores the same rows, the same objects and the same outcome figures', async () => {
    await resetData(services.orm, services.redis);
    await emptyBucket();
    await s3.send(new PutObjectCommand({ Bucket: env.S3_BUCKET, Key: 'not/in/the/backup.bin', Body: randomBytes(10) }));
    expect((await rowCounts()).treatment_case).toBe(0); // the wipe took

    const r = await script('restore', [backupDir]);
    expect(r.code, r.out).toBe(0);
    expect(r.out).toContain('match the manifest');
    expect(await rowCounts()).toEqual(beforeCounts);
    expect(await bucketDigests()).toEqual(beforeObjects);
    const after = await overviewFigures();
    expect(after.cases).toBeGreaterThan(0);
    expect(after).toEqual(beforeOverview);
  }, 240_000);
});
