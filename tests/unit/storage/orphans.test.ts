import { describe, expect, it } from 'vitest';
import { parseObjectKey, planSweep, practiceOfKey, type SweepExportRow, type SweepFilmRow, type SweepObject } from '@/lib/storage/orphans';

/** The storage sweep's selection (lib/storage/orphans.ts): table-driven, invented ids. */
const P = '11111111-1111-4111-8111-111111111111';
const C = '22222222-2222-4222-8222-222222222222';
const id = (n: number) => `00000000-0000-4000-8000-${String(n).padStart(12, '0')}`;
const filmKeys = (film: string) => [`practices/${P}/cases/${C}/films/${film}/original.png`, `practices/${P}/cases/${C}/films/${film}/web.png`, `practices/${P}/cases/${C}/films/${film}/thumbnail.jpg`];
const exportKey = (e: string) => `practices/${P}/cohorts/${C}/exports/${e}.zip`;

const cutoff = new Date('2026-12-02T12:00:00Z');
const old = new Date('2026-12-02T10:00:00Z');
const young = new Date('2026-12-02T12:00:00Z'); // at the cutoff: not older, so in flight

const objs = (keys: string[], at = old): SweepObject[] => keys.map((key) => ({ key, lastModified: at }));
const film = (n: number, over: Partial<SweepFilmRow> = {}): SweepFilmRow => ({ id: id(n), keys: filmKeys(id(n)), createdAt: old, read: false, ...over });
const exp = (n: number, status: SweepExportRow['status'], at = old): SweepExportRow => ({ id: id(n), status, objectKey: exportKey(id(n)), at });

describe('object keys', () => {
  it.each([
    [filmKeys(id(1))[0]!, { kind: 'film', practiceId: P, filmId: id(1) }],
    [filmKeys(id(1))[2]!, { kind: 'film', practiceId: P, filmId: id(1) }],
    [`practices/${P}/cases/${C}/films/${id(1)}/original.dcm`, { kind: 'film', practiceId: P, filmId: id(1) }],
    [exportKey(id(2)), { kind: 'export', practiceId: P, exportId: id(2) }],
    [`practices/${P}/cases/${C}/films/${id(1)}/other.png`, { kind: 'unknown' }],
    [`practices/${P}/cohorts/${C}/exports/${id(2)}.zip.part`, { kind: 'unknown' }],
    ['backups/2026-12-01.tar', { kind: 'unknown' }],
    [`practices/not-a-uuid/cases/${C}/films/${id(1)}/web.png`, { kind: 'unknown' }],
  ])('%s', (key, kind) => {
    expect(parseObjectKey(key)).toEqual(kind);
    expect(practiceOfKey(key)).toBe(kind.kind === 'unknown' ? null : P);
  });
});

describe('planSweep', () => {
  it('removes old objects with no row, never young ones or keys Lamina does not write', () => {
    const plan = planSweep({
      objects: [...objs(filmKeys(id(1))), ...objs(filmKeys(id(2))), ...objs(filmKeys(id(3)), young), ...objs(['practices/x/readme.txt'])],
      films: [film(1)],
      exports: [],
      cutoff,
    });
    expect(plan.deleteObjects).toEqual([...filmKeys(id(2))].sort());
    expect(plan.counts).toEqual({ orphanObjects: 3, youngObjects: 3, unknownObjects: 1, readFilmsMissingObjects: 0 });
    expect(plan.deleteFilms).toEqual([]);
  });

  it('an export file goes with a missing, failed or cancelled row; a queued, running or done one keeps it', () => {
    const rows = [exp(1, 'failed'), exp(2, 'cancelled'), exp(3, 'queued'), exp(4, 'running'), exp(5, 'done')];
    const plan = planSweep({ objects: objs([1, 2, 3, 4, 5, 6].map((n) => exportKey(id(n)))), films: [], exports: rows, cutoff });
    expect(plan.deleteObjects).toEqual([exportKey(id(1)), exportKey(id(2)), exportKey(id(6))]);
    expect(plan.failExports).toEqual([]);
  });

  it('an old film row missing an object goes with what is left of it; a read one stays; a young one stays', () => {
    const plan = planSweep({
      objects: objs([...filmKeys(id(1)), filmKeys(id(2))[1]!, filmKeys(id(2))[2]!]),
      films: [film(1), film(2), film(3, { read: true }), film(4, { createdAt: young })],
      exports: [],
      cutoff,
    });
    expect(plan.deleteFilms).toEqual([{ id: id(2), leftovers: [filmKeys(id(2))[1]!, filmKeys(id(2))[2]!] }]);
    expect(plan.deleteObjects).toEqual([]);
    expect(plan.counts.readFilmsMissingObjects).toBe(1);
  });

  it('a done export whose archive is missing is marked failed once it is old', () => {
    const plan = planSweep({ objects: [], films: [], exports: [exp(1, 'done'), exp(2, 'done', young), exp(3, 'failed')], cutoff });
    expect(plan.failExports).toEqual([id(1)]);
  });

  it('refuses to remove more than half of a practice’s old objects or rows (a wrong bucket, an empty database), unless forced', () => {
    const films = Array.from({ length: 8 }, (_, i) => film(i + 1));
    // the listing is empty: every film row looks as if its objects never arrived
    const emptyBucket = planSweep({ objects: [], films, exports: [], cutoff });
    expect(emptyBucket.refused).toEqual({ objects: false, rows: true });
    expect(emptyBucket.deleteFilms).toEqual([]);
    // the database is empty: every object looks orphaned
    const emptyDb = planSweep({ objects: objs(films.flatMap((f) => f.keys)), films: [], exports: [], cutoff });
    expect(emptyDb.refused).toEqual({ objects: true, rows: false });
    expect(emptyDb.deleteObjects).toEqual([]);
    expect(planSweep({ objects: [], films, exports: [], cutoff, force: true }).deleteFilms).toHaveLength(8);
    // a handful is never refused, even when it is all there is
    expect(planSweep({ objects: objs(filmKeys(id(9))), films: [], exports: [], cutoff }).deleteObjects).toHaveLength(3);
    // six of twenty old rows is under half: removed
    const many = Array.from({ length: 20 }, (_, i) => film(i + 1));
    const some = planSweep({ objects: objs(many.slice(6).flatMap((f) => f.keys)), films: many, exports: [], cutoff });
    expect(some.refused.rows).toBe(false);
    expect(some.deleteFilms).toHaveLength(6);
  });
});
