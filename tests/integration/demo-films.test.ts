import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_FILM_CASES, MIN_IN_SHARE } from '@/lib/demo/films';
import { inSecondReadingShare } from '@/lib/reading/rules';
import { seedDemo, type SeedResult } from '@/lib/demo/seed-demo';
import { openServices, resetData } from '../support/db';

/**
 * The demo seed's films (lib/demo/films.ts): drawn DICOM films uploaded through the film service for
 * the most recent reviewed follow-ups, some read, so that `npm start` shows the viewer, the reading
 * queue and Reader agreement with something in them. The seed must not change what the registry
 * says (no review corrected by a reading) and must stay idempotent.
 */
const services = await openServices();
afterAll(() => services.close());
const knex = () => services.em().getKnex();
let seeded: SeedResult;

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  seeded = await seedDemo(services.em());
}, 300_000);

describe('demo films', () => {
  it('a baseline and a follow-up film for each of the most recent reviewed follow-ups, dated, calibrated from DICOM and of the case’s own patient', async () => {
    // at least DEMO_FILM_CASES follow-ups, more when the share needed them
    expect(seeded.films.films).toBeGreaterThanOrEqual(2 * DEMO_FILM_CASES);
    const cases = seeded.films.films / 2;
    const films = (await knex()('film').where({ practice_id: seeded.practiceId }).select('role', 'visit_id', 'acquisition_date', 'patient_mismatch', 'modality', 'spacing_source')) as {
      role: string;
      visit_id: string | null;
      acquisition_date: string | null;
      patient_mismatch: boolean;
      modality: string | null;
      spacing_source: string;
    }[];
    expect(films).toHaveLength(2 * cases);
    expect(films.filter((f) => f.role === 'follow_up' && f.visit_id)).toHaveLength(cases);
    expect(films.filter((f) => f.role === 'post_fill')).toHaveLength(cases);
    expect(films.every((f) => f.acquisition_date !== null && !f.patient_mismatch && f.modality === 'IO' && f.spacing_source !== 'none')).toBe(true);
  });

  it('readings in every state the reading screens show, and no review corrected by them', async () => {
    const readings = (await knex()('film_reading').where({ practice_id: seeded.practiceId }).select('film_id', 'kind')) as { film_id: string; kind: string }[];
    expect(readings.length).toBe(seeded.films.readings);
    const byFilm = new Map<string, string[]>();
    for (const r of readings) byFilm.set(r.film_id, [...(byFilm.get(r.film_id) ?? []), r.kind]);
    const read = [...byFilm.values()];
    expect(read.length).toBeGreaterThan(0);
    expect(read.length).toBeLessThan(seeded.films.films / 2); // the rest wait for a first reading
    expect(read.some((k) => k.includes('second'))).toBe(true);
    // Every state the screens show, whatever film ids the upload drew (the share is a hash of the id):
    // a film of the share awaiting its blinded second reading, one in adjudication (two steps apart), agreed pairs.
    const pai = new Map<string, { first?: number; second?: number }>();
    for (const r of (await knex()('film_reading').where({ practice_id: seeded.practiceId }).select('film_id', 'kind', 'pai')) as { film_id: string; kind: string; pai: number }[]) {
      pai.set(r.film_id, { ...pai.get(r.film_id), [r.kind]: r.pai });
    }
    const percent = Number(((await knex()('practice').where({ id: seeded.practiceId }).first('second_reading_percent')) as { second_reading_percent: number }).second_reading_percent);
    const shared = [...pai.entries()].filter(([id]) => inSecondReadingShare(id, percent));
    expect(shared.length).toBeGreaterThanOrEqual(MIN_IN_SHARE);
    expect(shared.some(([, p]) => p.first !== undefined && p.second === undefined)).toBe(true);
    expect(shared.some(([, p]) => p.second !== undefined && Math.abs(p.second - p.first!) >= 2)).toBe(true);
    expect(shared.some(([, p]) => p.second !== undefined && Math.abs(p.second - p.first!) <= 1)).toBe(true);
    const superseded = (await knex()('review').where({ practice_id: seeded.practiceId }).whereNotNull('superseded_by_id').count('* as n')) as { n: string }[];
    expect(Number(superseded[0]!.n)).toBe(0);
  });

  it('a second run adds nothing', async () => {
    const again = await seedDemo(services.em());
    expect(again.films).toEqual({ films: 0, readings: 0 });
    const n = (await knex()('film').where({ practice_id: seeded.practiceId }).count('* as n')) as { n: string }[];
    expect(Number(n[0]!.n)).toBe(seeded.films.films);
  });
});
