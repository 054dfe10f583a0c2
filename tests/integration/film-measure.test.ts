import { afterAll, describe, expect, it, vi } from 'vitest';
import { AuditEventSchema, FilmSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { isKnownAction } from '@/lib/audit/words';
import { createCase } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { uploadFilm, type FilmView } from '@/lib/services/films';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { drawRadiograph, filmDicom, filmPng } from '../support/film-fixtures';

/**
 * Calibration and measurement stored with a film (issue 13), through the route handlers against the
 * real PostgreSQL and S3 fake: DICOM pixel spacing in PS3.3 order, a drawn known length, figures to
 * 0.1 mm (lib/films/measure.ts), a re-calibration recomputing the stored figures, refusals as 422,
 * roles and another practice's film, the audit trail. Only the session is replaced.
 */
const state = vi.hoisted(() => ({ actor: undefined as unknown }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: async () => ({ em: services.em(), actor: state.actor }),
}));
const { PUT: calibrateRoute } = await import('@/app/api/films/[id]/calibration/route');
const { PUT: measureRoute } = await import('@/app/api/films/[id]/measurement/route');

const services = await openServices();
afterAll(() => services.close());
const origin = new URL(env.APP_URL).origin;

async function put(route: typeof calibrateRoute, what: string, actor: Actor, id: string, body: unknown) {
  state.actor = actor;
  const req = new Request(`${origin}/api/films/${id}/${what}`, {
    method: 'PUT',
    headers: { Origin: origin, 'Sec-Fetch-Site': 'same-origin', 'Content-Type': 'application/json' },
    body: JSON.stringify(body),
  });
  const res = await route(req, { params: Promise.resolve({ id }) });
  return { status: res.status, body: (await res.json()) as { film: FilmView; message?: string; fieldErrors?: Record<string, string[]> } };
}
const calibrate = (actor: Actor, id: string, body: unknown) => put(calibrateRoute, 'calibration', actor, id, body);
const measure = (actor: Actor, id: string, body: unknown) => put(measureRoute, 'measurement', actor, id, body);

async function world() {
  await resetData(services.orm, services.redis);
  const a = await makeRegistryPractice(services.em(), 'alder');
  const patient = await createPatient(services.em(), a.coordinator, patientInput());
  const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId));
  const png = (await uploadFilm(services.em(), a.clinician, c.id, { role: 'follow_up' }, await filmPng(drawRadiograph(400, 300, 5)))).film;
  // Non-square pixels: rows 0.2 mm apart, columns 0.1 mm (DICOM PS3.3 order: row \ column).
  const dcm = (await uploadFilm(services.em(), a.clinician, c.id, { role: 'post_fill' }, filmDicom(drawRadiograph(200, 100, 6), { pixelSpacing: [0.2, 0.1] }))).film;
  return { a, c, png, dcm };
}

describe('calibrating and measuring a film', () => {
  it('DICOM pixel spacing: x from the column spacing, y from the row spacing; the diameter uses both', async () => {
    const w = await world();
    const cal = await calibrate(w.a.clinician, w.dcm.id, { source: 'dicom' });
    expect(cal.status).toBe(200);
    expect(cal.body.film.calibration).toEqual({ source: 'dicom', mmPerPxX: 0.1, mmPerPxY: 0.2, reference: null });
    // 30 px across and 40 px down: √(3² + 8²) = 8.544 mm → 8.5 (rounded to 0.1, common practice).
    const m = await measure(w.a.clinician, w.dcm.id, { diameter: { a: { x: 10, y: 10 }, b: { x: 40, y: 50 } } });
    expect(m.status).toBe(200);
    expect(m.body.film.measurement).toMatchObject({ diameterMm: 8.5, areaMm2: null, outline: null });
  });

  it('a drawn known length, an outline, and a re-calibration that recomputes the stored figures', async () => {
    const w = await world();
    const before = await measure(w.a.clinician, w.png.id, { diameter: { a: { x: 0, y: 0 }, b: { x: 50, y: 0 } } });
    expect(before.status).toBe(422);
    expect(before.body.message).toContain('Calibrate the film first');
    // 20 mm over 200 px: 0.1 mm per pixel both ways (square pixels: a PNG).
    expect((await calibrate(w.a.clinician, w.png.id, { source: 'drawn', a: { x: 100, y: 100 }, b: { x: 300, y: 100 }, mm: 20 })).body.film.calibration).toEqual({
      source: 'drawn',
      mmPerPxX: 0.1,
      mmPerPxY: 0.1,
      reference: { a: { x: 100, y: 100 }, b: { x: 300, y: 100 }, mm: 20 },
    });
    const outline = [{ x: 100, y: 100 }, { x: 150, y: 100 }, { x: 150, y: 130 }, { x: 100, y: 130 }];
    const m = await measure(w.a.clinician, w.png.id, { diameter: { a: { x: 100, y: 100 }, b: { x: 143, y: 100 } }, outline });
    expect(m.body.film.measurement).toMatchObject({ diameterMm: 4.3, areaMm2: 15 }); // 50 × 30 px² × 0.01 mm²
    // The same reference said to be 10 mm: every figure halves (0.05 mm per pixel).
    const again = await calibrate(w.a.clinician, w.png.id, { source: 'drawn', a: { x: 100, y: 100 }, b: { x: 300, y: 100 }, mm: 10 });
    expect(again.body.film.measurement).toMatchObject({ diameterMm: 2.2, areaMm2: 3.8 }); // 2.15 → 2.2; 3.75 → 3.8
    const stored = await services.em().findOneOrFail(FilmSchema, { id: w.png.id });
    expect(stored.lesionDiameterMm).toBe(2.2);
    const actions = (await services.em().find(AuditEventSchema, { action: { $like: 'film.%' } })).map((e) => e.action);
    expect(actions).toEqual(expect.arrayContaining(['film.calibrated', 'film.measured']));
    expect(isKnownAction('film.calibrated') && isKnownAction('film.measured')).toBe(true);
  });

  it('refusals are 422 and say why; nothing is stored', async () => {
    const w = await world();
    const noSpacing = await calibrate(w.a.clinician, w.png.id, { source: 'dicom' });
    expect(noSpacing.status).toBe(422);
    expect(noSpacing.body.message).toContain('no pixel spacing');
    const short = await calibrate(w.a.clinician, w.png.id, { source: 'drawn', a: { x: 10, y: 10 }, b: { x: 14, y: 10 }, mm: 5 });
    expect(short.status).toBe(422);
    expect(short.body.fieldErrors?.a?.[0]).toContain('at least 10 pixels');
    const off = await calibrate(w.a.clinician, w.png.id, { source: 'drawn', a: { x: 10, y: 10 }, b: { x: 401, y: 10 }, mm: 5 });
    expect(off.status).toBe(422);
    expect(off.body.fieldErrors?.a?.[0]).toContain('400 × 300');
    for (const body of [{ source: 'ruler' }, { source: 'drawn', a: { x: 1, y: 1 }, b: { x: 50, y: 1 }, mm: -3 }, { source: 'drawn', a: { x: 'x' }, b: null, mm: 1 }]) {
      expect((await calibrate(w.a.clinician, w.png.id, body)).status).toBe(422);
    }
    await calibrate(w.a.clinician, w.png.id, { source: 'drawn', a: { x: 100, y: 100 }, b: { x: 300, y: 100 }, mm: 20 });
    expect((await measure(w.a.clinician, w.png.id, { diameter: { a: { x: 1, y: 1 } } })).status).toBe(422);
    expect((await measure(w.a.clinician, w.png.id, { diameter: { a: { x: 1, y: 1 }, b: { x: 2, y: 2 } }, outline: [{ x: 1, y: 1 }] })).status).toBe(422);
    const stored = await services.em().findOneOrFail(FilmSchema, { id: w.png.id });
    expect(stored.lesionDiameterMm).toBeNull();
  });

  it('only clinicians measure; another practice’s film answers 404', async () => {
    const w = await world();
    const body = { source: 'drawn', a: { x: 100, y: 100 }, b: { x: 300, y: 100 }, mm: 20 };
    for (const actor of [w.a.coordinator, w.a.admin]) expect((await calibrate(actor, w.png.id, body)).status).toBe(403);
    const b = await makeRegistryPractice(services.em(), 'birch');
    expect((await calibrate(b.clinician, w.png.id, body)).status).toBe(404);
    expect((await measure(b.clinician, w.png.id, { diameter: { a: { x: 1, y: 1 }, b: { x: 20, y: 2 } } })).status).toBe(404);
    expect((await calibrate(w.a.clinician, 'not-a-film', body)).status).toBe(404);
  });
});
