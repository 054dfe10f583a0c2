import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { ReviewSchema } from '@/entities';
import { Migration20261202110000 } from '@/migrations/Migration20261202110000';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { createCase } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { updatePracticeSettings } from '@/lib/services/practice-settings';
import { todayIn } from '@/lib/services/registry-common';
import { createReview } from '@/lib/services/reviews';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

// Issue 11's rules through the review service (lib/scoring/README.md): tenderness to percussion is a
// sign of disease (Friedman & Mor 2004); an unchanged lesion before the practice's minimum
// observation time is uncertain (ESE 2006); an event elsewhere keeps its own date, an extraction its reason.
const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const today = todayIn('Europe/London');
const monthsAgo = (n: number) => addMonthsClamped(today, -n);

async function caseDone(monthsBack: number, tooth = 36) {
  const a = await makeRegistryPractice(services.em(), 'alder');
  const patient = await createPatient(services.em(), a.clinician, patientInput());
  const completion = monthsAgo(monthsBack);
  const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { tooth, startDate: addDaysTo(completion, -7), completionDate: completion, paiScore: 4 }));
  return { a, c, completion };
}

describe('review outcomes (issue 11)', () => {
  it('scores tenderness to percussion as disease, with its reason; mobility is stored and not scored', async () => {
    const { a, c } = await caseDone(13);
    const r = await createReview(services.em(), a.clinician, c.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, tenderToPercussion: true, mobility: true });
    expect(r.review).toMatchObject({ outcome: 'disease', reasons: ['tender to percussion'], signs: { tenderToPercussion: true, mobility: true } });
    const calm = await createReview(services.em(), a.clinician, c.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, mobility: true });
    expect(calm.review.outcome).toBe('healed');
  });

  it('an unchanged lesion before the practice’s minimum observation time is uncertain, after it disease', async () => {
    const { a, c, completion } = await caseDone(13);
    const early = await createReview(services.em(), a.clinician, c.id, { reviewDate: addDaysTo(completion, 200), toothStatus: 'present', paiScore: 4, lesionDiameterMm: 4 });
    expect(early.review).toMatchObject({ outcome: 'uncertain', successStrict: false, successLenient: false });
    expect(early.currentOutcome).toBe('uncertain');
    const late = await createReview(services.em(), a.clinician, c.id, { reviewDate: addDaysTo(completion, 380), toothStatus: 'present', paiScore: 4, lesionDiameterMm: 4 });
    expect(late.review).toMatchObject({ outcome: 'disease', reasons: ['lesion unchanged'] });
    // the practice's own setting
    await updatePracticeSettings(services.em(), a.admin, { minObservationDays: 540 });
    const again = await createReview(services.em(), a.clinician, c.id, { reviewDate: addDaysTo(completion, 390), toothStatus: 'present', paiScore: 4, lesionDiameterMm: 4 });
    expect(again.review.outcome).toBe('uncertain');
  });

  it('stores an extraction elsewhere with its date and reason; refuses a date before an earlier review or a reason without an extraction', async () => {
    const { a, c, completion } = await caseDone(20);
    await createReview(services.em(), a.clinician, c.id, { reviewDate: addDaysTo(completion, 190), toothStatus: 'present', paiScore: 3, lesionDiameterMm: 2 });
    await expect(
      createReview(services.em(), a.clinician, c.id, { reviewDate: today, toothStatus: 'extracted', eventDate: addDaysTo(completion, 100), extractionReason: 'fracture' }),
    ).rejects.toMatchObject({ status: 422, fieldErrors: { eventDate: [expect.stringMatching(/comes after this date/)] } });
    await expect(
      createReview(services.em(), a.clinician, c.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, extractionReason: 'fracture' }),
    ).rejects.toMatchObject({ status: 422, fieldErrors: { extractionReason: [expect.any(String)] } });
    const eventDate = addDaysTo(completion, 300);
    const r = await createReview(services.em(), a.clinician, c.id, { reviewDate: today, toothStatus: 'extracted', eventDate, extractionReason: 'fracture' });
    expect(r.review).toMatchObject({ outcome: 'tooth-extracted', eventDate, extractionReason: 'fracture', extractionReasonLabel: 'Fracture' });
    const row = await services.em().findOneOrFail(ReviewSchema, r.review.id);
    expect([row.eventDate, row.extractionReason]).toEqual([eventDate, 'fracture']);
  });

  it('the migration recomputes stored outcomes written under the old rules (percussion not scored, unchanged lesion always disease)', async () => {
    const { a, c, completion } = await caseDone(13);
    const tender = await createReview(services.em(), a.clinician, c.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, tenderToPercussion: true });
    const early = await createReview(services.em(), a.clinician, c.id, { reviewDate: addDaysTo(completion, 200), toothStatus: 'present', paiScore: 4, lesionDiameterMm: 4 });
    // what the old rules stored
    const knex = services.orm.em.getKnex();
    await knex('review').where({ id: tender.review.id }).update({ outcome: 'healed', success_strict: true, success_lenient: true, outcome_reasons: ['clinically normal', 'no lesion'] });
    await knex('review').where({ id: early.review.id }).update({ outcome: 'disease', success_strict: false, success_lenient: false, outcome_reasons: ['lesion unchanged'] });
    const migration = new Migration20261202110000(services.orm.em.getDriver(), services.orm.config);
    expect(await migration.recomputeOutcomes()).toBe(2);
    const rows = await knex('review').select('id', 'outcome', 'success_strict', 'outcome_reasons').whereIn('id', [tender.review.id, early.review.id]);
    const byId = new Map(rows.map((r: { id: string }) => [r.id, r]));
    expect(byId.get(tender.review.id)).toMatchObject({ outcome: 'disease', success_strict: false, outcome_reasons: ['tender to percussion'] });
    expect(byId.get(early.review.id)).toMatchObject({ outcome: 'uncertain', success_strict: false });
    expect(await migration.recomputeOutcomes()).toBe(0); // nothing left to change
  });
});
