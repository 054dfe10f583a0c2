/**
 * What `npm run backup` and `npm run restore` share: hashing files, running pg_dump/pg_restore,
 * the database's row counts. The manifest itself (its shape and checks) is lib/backup/manifest.ts.
 */
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { stat } from 'node:fs/promises';
import { Transform } from 'node:stream';

export interface Digest {
  size: number;
  sha256: string;
}

/** A pass-through stream that hashes and counts what goes through it. */
export function hashingStream(): { stream: Transform; digest: () => Digest } {
  const hash = createHash('sha256');
  let size = 0;
  const stream = new Transform({
    transform(chunk: Buffer, _enc, done) {
      hash.update(chunk);
      size += chunk.length;
      done(null, chunk);
    },
  });
  return { stream, digest: () => ({ size, sha256: hash.digest('hex') }) };
}

/** The size and sha256 of a file, or null when there is no such file. */
export async function digestFile(file: string): Promise<Digest | null> {
  try {
    if (!(await stat(file)).isFile()) return null;
  } catch {
    return null;
  }
  const hash = createHash('sha256');
  let size = 0;
  for await (const chunk of createReadStream(file)) {
    hash.update(chunk as Buffer);
    size += (chunk as Buffer).length;
  }
  return { size, sha256: hash.digest('hex') };
}

/** Runs a command; resolves with its stdout, rejects with its stderr's tail on a non-zero exit. */
export function run(cmd: string, args: string[], env: NodeJS.ProcessEnv = process.env): Promise<string> {
  return new Promise((resolve, reject) => {
    const child = spawn(cmd, args, { env, stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    child.stdout.on('data', (d: Buffer) => (out += d.toString()));
    child.stderr.on('data', (d: Buffer) => (err += d.toString()));
    child.on('error', (e) => reject(new Error(`${cmd}: ${e.message}`)));
    child.on('close', (code) => (code === 0 ? resolve(out) : reject(new Error(`${cmd} exited with ${code}: ${err.trim().split('\n').slice(-5).join('\n')}`))));
  });
}

/**
 * pg_dump and pg_restore take the URL without its password (it would show in `ps`): the password
 * goes through PGPASSWORD.
 */
export function pgConnection(databaseUrl: string): { dbname: string; env: NodeJS.ProcessEnv } {
  const u = new URL(databaseUrl);
  const password = decodeURIComponent(u.password);
  u.password = '';
  return { dbname: u.toString(), env: { ...process.env, ...(password ? { PGPASSWORD: password } : {}) } };
}

type Raw = { raw: (sql: string) => PromiseLike<{ rows: Record<string, unknown>[] }> };

/** Rows per table of the public schema (the migrations table included). */
export async function countRows(db: Raw): Promise<Record<string, number>> {
  const tables = (await db.raw(`select tablename from pg_tables where schemaname = 'public' order by tablename`)).rows.map((r) => String(r.tablename));
  const counts: Record<string, number> = {};
  for (const t of tables) counts[t] = Number((await db.raw(`select count(*)::bigint as n from "${t.replaceAll('"', '""')}"`)).rows[0]!.n);
  return counts;
}

export async function lastMigration(db: Raw): Promise<string | null> {
  try {
    return ((await db.raw(`select name from mikro_orm_migrations order by id desc limit 1`)).rows[0]?.name as string | undefined) ?? null;
  } catch {
    return null;
  }
}
