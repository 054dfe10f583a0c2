import { describe, expect, it } from 'vitest';
import { fileProblem, manifestFiles, objectFile, parseManifest, rowCountDifferences, type Manifest } from '@/lib/backup/manifest';

const sha = (c: string) => c.repeat(64);
const manifest: Manifest = {
  lamina: 'backup',
  version: 1,
  createdAt: '2026-12-02T14:00:00.000Z',
  database: { file: 'db.dump', size: 10, sha256: sha('a'), format: 'pg_dump custom', pgDumpVersion: 'pg_dump (PostgreSQL) 15', lastMigration: 'Migration1', rowCounts: { practice: 2, case: 40 } },
  objects: { bucket: 'lamina-films', items: [{ key: 'practices/p/cases/c/f.png', file: 'objects/practices/p/cases/c/f.png', size: 3, sha256: sha('b'), contentType: 'image/png' }] },
};

describe('backup manifest (lib/backup/manifest.ts)', () => {
  it('parses what the backup writes, and lists the dump first, then the objects', () => {
    const m = parseManifest(JSON.stringify(manifest));
    expect(manifestFiles(m).map((f) => f.file)).toEqual(['db.dump', 'objects/practices/p/cases/c/f.png']);
  });

  it.each([
    ['not JSON', '{', /not JSON/],
    ['another kind of file', JSON.stringify({ ...manifest, lamina: 'other' }), /not a Lamina backup manifest \(lamina/],
    ['a bad checksum', JSON.stringify({ ...manifest, database: { ...manifest.database, sha256: 'xyz' } }), /database\.sha256/],
    ['a path outside the directory', JSON.stringify({ ...manifest, objects: { ...manifest.objects, items: [{ ...manifest.objects.items[0], file: '../../etc/passwd' }] } }), /objects\.items\.0\.file/],
    ['an absolute path', JSON.stringify({ ...manifest, database: { ...manifest.database, file: '/tmp/db.dump' } }), /database\.file/],
  ])('refuses %s with a message that says where', (_what, text, message) => {
    expect(() => parseManifest(text)).toThrow(message);
  });

  it('says which file is missing, has another size, or another checksum', () => {
    const f = { file: 'db.dump', size: 10, sha256: sha('a') };
    expect(fileProblem(f, { size: 10, sha256: sha('a') })).toBeNull();
    expect(fileProblem(f, null)).toBe('db.dump: missing');
    expect(fileProblem(f, { size: 11, sha256: sha('a') })).toBe('db.dump: 11 bytes, the manifest says 10');
    expect(fileProblem(f, { size: 10, sha256: sha('c') })).toMatch(/^db\.dump: checksum mismatch \(sha256 c{64}, the manifest says a{64}\)$/);
  });

  it('puts an object under objects/ by its key, and refuses keys that would leave the directory', () => {
    expect(objectFile('practices/p/x.dcm')).toBe('objects/practices/p/x.dcm');
    expect(() => objectFile('../x')).toThrow(/cannot be a file name/);
    expect(() => objectFile('a//b')).toThrow(/cannot be a file name/);
  });

  it('compares row counts table by table (a table missing on one side counts 0 rows)', () => {
    expect(rowCountDifferences({ a: 1, b: 0 }, { a: 1 })).toEqual([]);
    expect(rowCountDifferences({ a: 1, b: 2 }, { a: 1, b: 1, c: 3 })).toEqual(['b: 1 rows, expected 2', 'c: 3 rows, expected 0']);
  });
});
