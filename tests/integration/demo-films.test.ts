import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_FILM_CASES } from '@/lib/demo/films';
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
    expect(seeded.films.films).toBe(2 * DEMO_FILM_CASES);
    const films = (await knex()('film').where({ practice_id: seeded.practiceId }).select('role', 'visit_id', 'acquisition_date', 'patient_mismatch', 'modality', 'spacing_source')) as {
      role: string;
      visit_id: string | null;
      acquisition_date: string | null;
      patient_mismatch: boolean;
      modality: string | null;
      spacing_source: string;
    }[];
    expect(films).toHaveLength(2 * DEMO_FILM_CASES);
    expect(films.filter((f) => f.role === 'follow_up' && f.visit_id)).toHaveLength(DEMO_FILM_CASES);
    expect(films.filter((f) => f.role === 'post_fill')).toHaveLength(DEMO_FILM_CASES);
    expect(films.every((f) => f.acquisition_date !== null && !f.patient_mismatch && f.modality === 'IO' && f.spacing_source !== 'none')).toBe(true);
  });

  it('readings in every state the reading screens show, and no review corrected by them', async () => {
    const readings = (await knex()('film_reading').where({ practice_id: seeded.practiceId }).select('film_id', 'kind')) as { film_id: string; kind: string }[];
    expect(readings.length).toBe(seeded.films.readings);
    const byFilm = new Map<string, string[]>();
    for (const r of readings) byFilm.set(r.film_id, [...(byFilm.get(r.film_id) ?? []), r.kind]);
    const read = [...byFilm.values()];
    expect(read.length).toBeGreaterThan(0);
    expect(read.length).toBeLessThan(DEMO_FILM_CASES); // the rest wait for a first reading
    expect(read.some((k) => k.includes('second'))).toBe(true);
    const superseded = (await knex()('review').where({ practice_id: seeded.practiceId }).whereNotNull('superseded_by_id').count('* as n')) as { n: string }[];
    expect(Number(superseded[0]!.n)).toBe(0);
  });

  it('a second run adds nothing', async () => {
    const again = await seedDemo(services.em());
    expect(again.films).toEqual({ films: 0, readings: 0 });
    const n = (await knex()('film').where({ practice_id: seeded.practiceId }).count('* as n')) as { n: string }[];
    expect(Number(n[0]!.n)).toBe(2 * DEMO_FILM_CASES);
  });
});
