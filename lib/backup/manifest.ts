import { z } from 'zod';

/**
 * The backup directory's manifest (manifest.json), written by `npm run backup` and checked by
 * `npm run restore` before it touches anything. Pure: no I/O; scripts/backup.ts and
 * scripts/restore.ts read and write the files.
 *
 *   DIR/manifest.json   this
 *   DIR/db.dump         pg_dump --format=custom of the database
 *   DIR/objects/<key>   every object of the bucket, by its key
 */
export const MANIFEST_VERSION = 1;

/** A path inside the backup directory: relative, forward slashes, no `..`, no empty segment. */
const InsidePath = z
  .string()
  .min(1)
  .max(1024)
  .refine((p) => !p.startsWith('/') && !p.includes('\\') && p.split('/').every((s) => s !== '' && s !== '.' && s !== '..'), 'a path inside the backup directory');

const Sha256 = z.string().regex(/^[0-9a-f]{64}$/, 'a sha256 in hex');

export const ManifestFileSchema = z.object({ file: InsidePath, size: z.number().int().nonnegative(), sha256: Sha256 });

export const ManifestSchema = z.object({
  lamina: z.literal('backup'),
  version: z.literal(MANIFEST_VERSION),
  createdAt: z.iso.datetime(),
  database: ManifestFileSchema.extend({
    format: z.literal('pg_dump custom'),
    pgDumpVersion: z.string().max(200),
    /** the newest migration applied when the backup was taken */
    lastMigration: z.string().max(200).nullable(),
    /** rows per table, counted in the snapshot pg_dump read */
    rowCounts: z.record(z.string().max(200), z.number().int().nonnegative()),
  }),
  objects: z.object({
    bucket: z.string().max(200),
    items: z.array(ManifestFileSchema.extend({ key: z.string().min(1).max(1024), contentType: z.string().max(200).nullable() })),
  }),
});
export type Manifest = z.infer<typeof ManifestSchema>;
export type ManifestFile = z.infer<typeof ManifestFileSchema>;

/** Where an object's bytes go in the backup directory (keys are S3 keys: slashes make folders). */
export function objectFile(key: string): string {
  const file = `objects/${key}`;
  if (!InsidePath.safeParse(file).success) throw new Error(`an object key that cannot be a file name: ${JSON.stringify(key)}`);
  return file;
}

/** Parses a manifest's text; throws an Error that says what is wrong. */
export function parseManifest(text: string): Manifest {
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch {
    throw new Error('manifest.json is not JSON');
  }
  const r = ManifestSchema.safeParse(json);
  if (!r.success) {
    const first = r.error.issues[0]!;
    throw new Error(`manifest.json is not a Lamina backup manifest (${first.path.join('.') || 'root'}: ${first.message})`);
  }
  return r.data;
}

/** Every file the manifest lists: the dump first, then the objects. */
export function manifestFiles(m: Manifest): ManifestFile[] {
  return [{ file: m.database.file, size: m.database.size, sha256: m.database.sha256 }, ...m.objects.items.map(({ file, size, sha256 }) => ({ file, size, sha256 }))];
}

/** What is wrong with one file, given what was found on disk (null: missing); null when it matches. */
export function fileProblem(expected: ManifestFile, found: { size: number; sha256: string } | null): string | null {
  if (!found) return `${expected.file}: missing`;
  if (found.size !== expected.size) return `${expected.file}: ${found.size} bytes, the manifest says ${expected.size}`;
  if (found.sha256 !== expected.sha256) return `${expected.file}: checksum mismatch (sha256 ${found.sha256}, the manifest says ${expected.sha256})`;
  return null;
}

/** Tables whose row counts differ between two countings ([] when equal). */
export function rowCountDifferences(expected: Record<string, number>, found: Record<string, number>): string[] {
  const tables = [...new Set([...Object.keys(expected), ...Object.keys(found)])].sort();
  return tables.filter((t) => (expected[t] ?? 0) !== (found[t] ?? 0)).map((t) => `${t}: ${found[t] ?? 0} rows, expected ${expected[t] ?? 0}`);
}
