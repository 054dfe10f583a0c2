import { afterAll, beforeEach, describe, expect, it, vi } from 'vitest';
import { AuditEventSchema, FilmReadingSchema, PracticeSchema, ReviewSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { inSecondReadingShare } from '@/lib/reading/rules';
import { createCase } from '@/lib/services/cases';
import { calibrateFilm } from '@/lib/services/film-measure';
import { uploadFilm } from '@/lib/services/films';
import { createPatient } from '@/lib/services/patients';
import { blindedFilm, readingAgreement, readingQueue, recordReading, setReferenceFilm } from '@/lib/services/readings';
import { createReview } from '@/lib/services/reviews';
import { cohenKappaInterval } from '@/lib/stats';
import { caseInput, makePractice, openServices, patientInput, resetData } from '../support/db';
import { drawRadiograph, filmPng } from '../support/film-fixtures';

/**
 * Reading queue and blinded second reading (issue 13) against the real PostgreSQL and the S3 fake:
 * the second-reading rule, the blinded routes (exact JSON keys, nothing identifying in the JSON or
 * the image's headers), first reader ≠ second reader, adjudication by a third reader, the agreed
 * PAI becoming the review's (a correction, the earlier version kept), every reading kept, the
 * audit trail, and the lead's agreement figures equal to lib/stats. Only the session is replaced.
 */
const state = vi.hoisted(() => ({ actor: undefined as unknown }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: async () => ({ em: services.em(), actor: state.actor }),
}));

const { GET: blindedRoute } = await import('@/app/api/reading/blinded/[id]/route');
const { GET: blindedImageRoute } = await import('@/app/api/reading/blinded/[id]/image/route');
const { POST: readingRoute } = await import('@/app/api/reading/films/[id]/readings/route');
const { GET: agreementRoute } = await import('@/app/api/outcomes/agreement/route');

const services = await openServices();
afterAll(() => services.close());
const origin = new URL(env.APP_URL).origin;

async function world(percent: number) {
  await resetData(services.orm, services.redis);
  const em = services.em();
  const made = await makePractice(em, 'rowan', [
    { email: 'cora@rowan.test', roles: ['coordinator'] },
    { email: 'cal@rowan.test', roles: ['clinician'] },
    { email: 'cleo@rowan.test', roles: ['clinician'] },
    { email: 'cass@rowan.test', roles: ['clinician'] },
    { email: 'lead@rowan.test', roles: ['auditor'] },
  ]);
  await em.nativeUpdate(PracticeSchema, { id: made.practice.id }, { secondReadingPercent: percent });
  const [coord, cal, cleo, cass, lead] = ['cora', 'cal', 'cleo', 'cass', 'lead'].map((n) => made.actor(`${n}@rowan.test`)) as [Actor, Actor, Actor, Actor, Actor];
  const patient = await createPatient(services.em(), coord, patientInput({ registryNumber: 'RW-7731', givenName: 'Thessaly', familyName: 'Quorndon' }));
  const c = await createCase(services.em(), cal, caseInput(patient.id, cal.userId, { paiScore: 4 }));
  const visit = (await services.em().getKnex()('recall_visit').where({ case_id: c.id, milestone: 12 }).first('id')) as { id: string };
  return { made, coord, cal, cleo, cass, lead, patient, c, visit };
}

let seed = 100;
async function film(w: Awaited<ReturnType<typeof world>>, visitId?: string) {
  const bytes = new Uint8Array(await filmPng(drawRadiograph(64, 48, seed++)));
  const r = await uploadFilm(services.em(), w.coord, w.c.id, { role: 'follow_up', ...(visitId ? { visitId } : {}) }, bytes);
  return r.film;
}

async function call(actor: Actor, route: (req: Request, ctx: { params: Promise<{ id: string }> }) => Promise<Response>, url: string, id: string, body?: unknown) {
  state.actor = actor;
  const init: RequestInit = body === undefined ? {} : { method: 'POST', headers: { Origin: origin, 'Sec-Fetch-Site': 'same-origin', 'Content-Type': 'application/json' }, body: JSON.stringify(body) };
  return route(new Request(`${origin}${url}`, init), { params: Promise.resolve({ id }) });
}

describe('first reading and who reads second', () => {
  it('a first reading that is not disease, outside the share, is agreed at once; its review keeps the same PAI', async () => {
    const w = await world(0);
    const f = await film(w);
    const r = await recordReading(services.em(), w.cal, f.id, { kind: 'first', pai: 2 });
    expect(r).toMatchObject({ kind: 'first', pai: 2, status: 'agreed', reviewCorrected: null });
    const q = await readingQueue(services.em(), w.cleo, { scope: 'practice' });
    expect(q.items).toEqual([]);
    expect(q.counts).toMatchObject({ agreed: 1 });
    // a second first reading is refused
    await expect(recordReading(services.em(), w.cleo, f.id, { kind: 'first', pai: 3 })).rejects.toMatchObject({ status: 409 });
  });

  it('every share is reproducible by the film id: at 100% every film goes to a second reader', async () => {
    const w = await world(100);
    const f = await film(w);
    expect(inSecondReadingShare(f.id, 100)).toBe(true);
    expect((await recordReading(services.em(), w.cal, f.id, { kind: 'first', pai: 1 })).status).toBe('awaiting-second');
  });

  it('the queue: my first readings (my cases) vs the practice; the coordinator has no queue', async () => {
    const w = await world(0);
    const f = await film(w);
    expect((await readingQueue(services.em(), w.cal, {})).items.map((i) => [i.filmId, i.task])).toEqual([[f.id, 'first']]);
    expect((await readingQueue(services.em(), w.cleo, {})).items).toEqual([]);
    expect((await readingQueue(services.em(), w.cleo, { scope: 'practice' })).items.map((i) => i.task)).toEqual(['first']);
    await expect(readingQueue(services.em(), w.coord, {})).rejects.toMatchObject({ status: 403 });
    await expect(readingQueue(services.em(), w.cal, { scope: 'everyone' })).rejects.toMatchObject({ status: 422 });
  });
});

describe('blinded second reading, adjudication and the review', () => {
  let w: Awaited<ReturnType<typeof world>>;
  beforeEach(async () => {
    w = await world(0);
  });

  it('disease goes to a second reader who sees only the film and its calibration; disagreement → adjudication → the review takes the agreed PAI', async () => {
    const f = await film(w, w.visit.id);
    const review = await createReview(services.em(), w.cal, w.c.id, { reviewDate: '2025-02-01', toothStatus: 'present', paiScore: 5, lesionDiameterMm: 6, visitId: w.visit.id, swelling: true });
    // PAI 5 against a baseline of 4: a larger lesion, disease by lib/scoring → a second reading even at 0%
    const first = await recordReading(services.em(), w.cal, f.id, { kind: 'first', pai: 5, signs: { swelling: true } });
    expect(first.status).toBe('awaiting-second');

    // the first reader never reads second
    expect((await call(w.cal, blindedRoute, `/api/reading/blinded/${f.id}`, f.id)).status).toBe(404);
    expect((await call(w.cal, readingRoute, `/api/reading/films/${f.id}/readings`, f.id, { kind: 'second', pai: 5 })).status).toBe(409);
    expect((await readingQueue(services.em(), w.cal, { scope: 'practice' })).items).toEqual([]);

    // the second reader's queue item and the blinded route carry nothing but the film
    const queue = await readingQueue(services.em(), w.cleo, {});
    expect(queue.items).toEqual([{ filmId: f.id, task: 'second', taskLabel: 'Blinded second reading', filedAt: expect.any(String) }]);
    const res = await call(w.cleo, blindedRoute, `/api/reading/blinded/${f.id}`, f.id);
    expect(res.status).toBe(200);
    const text = await res.text();
    const body = JSON.parse(text) as Record<string, unknown>;
    expect(Object.keys(body).sort()).toEqual(['calibration', 'filmId', 'height', 'imageUrl', 'width']);
    expect(Object.keys(body.calibration as object)).toEqual(['mmPerPixel']);
    expect(body).toEqual({ filmId: f.id, imageUrl: `/api/reading/blinded/${f.id}/image`, width: f.webWidth, height: f.webHeight, calibration: { mmPerPixel: null } });
    for (const secret of [w.c.id, w.patient.id, 'RW-7731', 'Thessaly', 'Quorndon', w.cal.userId, 'cal@rowan', review.review.id, w.visit.id, '"pai"', 'swelling']) {
      expect(text, `blinded JSON must not contain ${secret}`).not.toContain(secret);
    }
    // the tooth (36) as a number of its own: a film id may hold the digits 36 (about one run in nine did)
    expect(text, 'blinded JSON must not name the tooth').not.toMatch(/\b36\b/);
    const image = await call(w.cleo, blindedImageRoute, `/api/reading/blinded/${f.id}/image`, f.id);
    expect(image.status).toBe(200);
    expect(image.headers.get('content-disposition')).toBe('inline; filename="film.png"');
    expect(image.headers.get('cache-control')).toBe('no-store');
    const headers = [...image.headers.entries()].map(([k, v]) => `${k}: ${v}`).join('\n');
    for (const secret of [w.c.id, w.patient.id, f.id.slice(0, 8), 'RW-7731', 'Quorndon']) expect(headers).not.toContain(secret);
    expect((await image.arrayBuffer()).byteLength).toBeGreaterThan(100);

    // the second reader is two steps away: adjudication; the second reader learns nothing back
    const second = await call(w.cleo, readingRoute, `/api/reading/films/${f.id}/readings`, f.id, { kind: 'second', pai: 3 });
    expect(second.status).toBe(200);
    expect(Object.keys((await second.json()) as object).sort()).toEqual(['id', 'kind', 'pai']);
    // neither reader adjudicates; the third clinician does
    await expect(recordReading(services.em(), w.cleo, f.id, { kind: 'adjudication', pai: 4 })).rejects.toMatchObject({ status: 409 });
    const third = await readingQueue(services.em(), w.cass, {});
    expect(third.items).toEqual([expect.objectContaining({ filmId: f.id, task: 'adjudication', scores: [5, 3], consensus: false })]);
    expect(JSON.stringify(third.items)).not.toContain(w.cal.userId);
    const adj = await recordReading(services.em(), w.cass, f.id, { kind: 'adjudication', pai: 4 });
    expect(adj).toMatchObject({ status: 'agreed', reviewCorrected: expect.any(String) });

    // the review's current version has the agreed PAI; the earlier one kept and superseded; every reading kept
    const reviews = await services.em().find(ReviewSchema, { case: w.c.id }, { orderBy: { createdAt: 'asc' } });
    expect(reviews.map((r) => [r.paiScore, r.supersededBy?.id ?? null])).toEqual([[5, reviews[1]!.id], [4, null]]);
    expect(reviews[1]!.correctionReason).toMatch(/Agreed PAI 4.*adjudication/);
    expect(reviews[1]!.signs).toMatchObject({ swelling: true });
    const readings = await services.em().find(FilmReadingSchema, { film: f.id }, { orderBy: { createdAt: 'asc' } });
    expect(readings.map((r) => [r.kind, r.pai])).toEqual([['first', 5], ['second', 3], ['adjudication', 4]]);
    // the blinded route closes once the film is agreed
    expect((await call(w.cleo, blindedRoute, `/api/reading/blinded/${f.id}`, f.id)).status).toBe(404);

    const actions = (await services.em().find(AuditEventSchema, { practiceId: w.made.practice.id })).map((e) => e.action);
    for (const a of ['reading.recorded', 'reading.blinded_viewed', 'film.viewed', 'reading.queue_read', 'reading.agreed', 'review.corrected', 'review.superseded']) expect(actions).toContain(a);
  });

  it('within one step the first reading stands; the lead’s consensus settles an adjudication', async () => {
    const a = await film(w);
    await recordReading(services.em(), w.cal, a.id, { kind: 'first', pai: 5 });
    expect((await recordReading(services.em(), w.cleo, a.id, { kind: 'second', pai: 4 })).status).toBeUndefined();
    expect((await readingQueue(services.em(), w.lead, { scope: 'practice' })).counts.agreed).toBe(1);
    const b = await film(w);
    await recordReading(services.em(), w.cal, b.id, { kind: 'first', pai: 5 });
    await recordReading(services.em(), w.cleo, b.id, { kind: 'second', pai: 2 });
    const q = await readingQueue(services.em(), w.lead, { scope: 'practice' });
    expect(q.items).toEqual([expect.objectContaining({ filmId: b.id, task: 'adjudication', consensus: true })]);
    const blinded = await blindedFilm(services.em(), w.lead, b.id);
    expect(blinded.filmId).toBe(b.id);
    await expect(recordReading(services.em(), w.lead, b.id, { kind: 'first', pai: 2 })).rejects.toMatchObject({ status: 403 });
    expect(await recordReading(services.em(), w.lead, b.id, { kind: 'adjudication', pai: 3 })).toMatchObject({ status: 'agreed', reviewCorrected: null });
    const consensus = await services.em().findOneOrFail(FilmReadingSchema, { film: b.id, kind: 'adjudication' });
    expect(consensus.consensus).toBe(true);
  });

  it('a film calibrated by a known length (a PNG: no pixel spacing) reaches the readers with that scale, per pixel of the image they see', async () => {
    const f = await film(w);
    expect((await readingQueue(services.em(), w.cal, {})).items.find((i) => i.filmId === f.id)?.film?.calibration).toEqual({ mmPerPixel: null });
    // 40 px drawn across = 10 mm: 0.25 mm per original pixel, square pixels (lib/films/calibration.ts)
    await calibrateFilm(services.em(), w.cal, f.id, { source: 'drawn', a: { x: 4, y: 10 }, b: { x: 44, y: 10 }, mm: 10 });
    const item = (await readingQueue(services.em(), w.cal, {})).items.find((i) => i.filmId === f.id)!;
    const [row, col] = item.film!.calibration.mmPerPixel!;
    expect(col).toBeCloseTo(0.25 * (f.width / f.webWidth), 6);
    expect(row).toBeCloseTo(0.25 * (f.height / f.webHeight), 6);
    await services.em().nativeUpdate(PracticeSchema, { id: w.made.practice.id }, { secondReadingPercent: 100 });
    await recordReading(services.em(), w.cal, f.id, { kind: 'first', pai: 2 });
    expect((await blindedFilm(services.em(), w.cleo, f.id)).calibration).toEqual(item.film!.calibration);
  });

  it('refuses bad input with 4xx and another practice’s film as unknown', async () => {
    const f = await film(w);
    for (const body of [{ kind: 'first', pai: 6 }, { kind: 'first', pai: 2.5 }, { kind: 'fourth', pai: 2 }, { kind: 'first', pai: 2, signs: { glow: true } }, null]) {
      expect((await call(w.cal, readingRoute, `/api/reading/films/${f.id}/readings`, f.id, body)).status).toBe(422);
    }
    const other = await makePractice(services.em(), 'yew', [{ email: 'cy@yew.test', roles: ['clinician'] }]);
    expect((await call(other.actor('cy@yew.test'), readingRoute, `/api/reading/films/${f.id}/readings`, f.id, { kind: 'first', pai: 2 })).status).toBe(404);
    expect((await call(other.actor('cy@yew.test'), blindedRoute, `/api/reading/blinded/${f.id}`, f.id)).status).toBe(404);
  });
});

describe('agreement and the calibration exercise (the lead)', () => {
  it('kappa per reader pair equals lib/stats on the same pairs; exercise readings against the reference set', async () => {
    const w = await world(100);
    const scores: [number, number][] = [[1, 1], [2, 2], [3, 4], [4, 4], [5, 4], [2, 1], [3, 3], [1, 2]];
    const films = [];
    for (const [a, b] of scores) {
      const f = await film(w);
      films.push(f);
      await recordReading(services.em(), w.cal, f.id, { kind: 'first', pai: a });
      await recordReading(services.em(), w.cleo, f.id, { kind: 'second', pai: b });
    }
    // reference set: the lead marks three films; cal does the exercise, cleo not yet
    for (const [i, pai] of [[0, 1], [2, 4], [4, 5]] as const) await setReferenceFilm(services.em(), w.lead, films[i]!.id, { pai });
    await expect(setReferenceFilm(services.em(), w.cal, films[0]!.id, { pai: 1 })).rejects.toMatchObject({ status: 403 });
    const exercise = (await readingQueue(services.em(), w.cal, {})).items.filter((i) => i.task === 'reference-exercise');
    expect(exercise).toHaveLength(3);
    expect((await blindedFilm(services.em(), w.cal, films[0]!.id)).filmId).toBe(films[0]!.id);
    for (const [i, pai] of [[0, 1], [2, 3], [4, 5]] as const) await recordReading(services.em(), w.cal, films[i]!.id, { kind: 'reference-exercise', pai });
    expect((await readingQueue(services.em(), w.cal, {})).exercise).toBe(0);

    state.actor = w.cal;
    expect((await agreementRoute(new Request(`${origin}/api/outcomes/agreement`), { params: Promise.resolve({}) })).status).toBe(403);
    const view = await readingAgreement(services.em(), w.lead);
    expect(view.pairs).toHaveLength(1);
    const ordered = w.cal.userId < w.cleo.userId ? scores : scores.map(([a, b]) => [b, a] as [number, number]);
    const ref = { linear: cohenKappaInterval(ordered, { weights: 'linear', scale: [1, 2, 3, 4, 5] }), quadratic: cohenKappaInterval(ordered, { weights: 'quadratic', scale: [1, 2, 3, 4, 5] }) };
    expect(view.pairs[0]!.n).toBe(8);
    expect(view.pairs[0]!.linear!.kappa).toBeCloseTo(ref.linear.kappa, 12);
    expect(view.pairs[0]!.quadratic!.lower).toBeCloseTo(ref.quadratic.lower, 12);
    const calRow = view.calibration.find((c) => c.readerId === w.cal.userId)!;
    expect(calRow).toMatchObject({ n: 3, due: false, lastExercise: view.today });
    expect(calRow.linear!.kappa).toBeCloseTo(cohenKappaInterval([[1, 1], [4, 3], [5, 5]], { weights: 'linear', scale: [1, 2, 3, 4, 5] }).kappa, 12);
    expect(view.calibration.find((c) => c.readerId === w.cleo.userId)).toMatchObject({ n: 0, due: true, lastExercise: null });
    expect(view.reference).toHaveLength(3);
    expect(view.candidates.map((c) => c.filmId)).not.toContain(films[0]!.id);
    await setReferenceFilm(services.em(), w.lead, films[0]!.id, { pai: null });
    expect((await readingAgreement(services.em(), w.lead)).reference).toHaveLength(2);
  });
});
