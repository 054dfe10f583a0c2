import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { archiveCase, createCase, getCase, listCases, listClinicians, listPatientCases, updateCase } from '@/lib/services/cases';
import { NotFoundError } from '@/lib/services/errors';
import { archivePatient, createPatient, getPatient, listPatients, updatePatient } from '@/lib/services/patients';
import { createReferrer, listReferrers } from '@/lib/services/referrers';
import { todayIn } from '@/lib/services/registry-common';
import { createReview, listReviews } from '@/lib/services/reviews';
import { closeVisitAsLost, listVisits, updateVisit } from '@/lib/services/visits';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const today = todayIn('Europe/London');

describe('practice isolation in the registry', () => {
  it('one practice never sees or changes another’s patients, cases, visits or reviews: their ids answer 404', async () => {
    const a = await makeRegistryPractice(services.em(), 'alder');
    const b = await makeRegistryPractice(services.em(), 'birch');
    // The same registry number may exist in both practices.
    const pa = await createPatient(services.em(), a.clinician, patientInput());
    const pb = await createPatient(services.em(), b.clinician, patientInput({ givenName: 'Bryn' }));
    const completion = addMonthsClamped(today, -2);
    const ca = await createCase(services.em(), a.clinician, caseInput(pa.id, a.clinician.userId, { startDate: addDaysTo(completion, -7), completionDate: completion }));
    await createReferrer(services.em(), a.coordinator, { name: 'Dr Alder Only' });

    // Lists show only the own practice's records.
    expect((await listPatients(services.em(), b.auditor, {})).rows.map((r) => r.id)).toEqual([pb.id]);
    expect((await listCases(services.em(), b.auditor, {})).total).toBe(0);
    expect((await listCases(services.em(), b.auditor, { q: 'T-0001' })).total).toBe(0);
    expect((await listCases(services.em(), b.auditor, { patient: pa.id })).total).toBe(0);
    expect((await listPatientCases(services.em(), b.auditor, pa.id)).length).toBe(0);
    expect((await listReferrers(services.em(), b.clinician, {})).total).toBe(0);
    expect((await listClinicians(services.em(), b.coordinator)).map((c) => c.email).sort()).toEqual(['cal@birch.test', 'cleo@birch.test']);

    // Reads and changes by id answer 404.
    const notFound = [
      () => getPatient(services.em(), b.auditor, pa.id),
      () => updatePatient(services.em(), b.clinician, pa.id, { phone: '01632 960000' }),
      () => archivePatient(services.em(), b.clinician, pa.id),
      () => getCase(services.em(), b.auditor, ca.id),
      () => updateCase(services.em(), b.clinician, ca.id, { sealerClass: 'silicone' }),
      () => archiveCase(services.em(), b.clinician, ca.id),
      () => listVisits(services.em(), b.auditor, ca.id),
      () => listReviews(services.em(), b.auditor, ca.id),
      () => createReview(services.em(), b.clinician, ca.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0 }),
      () => updateVisit(services.em(), b.coordinator, ca.visits[0]!.id, { status: 'invited' }),
      () => closeVisitAsLost(services.em(), b.coordinator, ca.visits[0]!.id, {}),
      () => getCase(services.em(), b.auditor, 'not-a-uuid'),
    ];
    for (const call of notFound) await expect(call()).rejects.toBeInstanceOf(NotFoundError);

    // References to another practice's records are refused as input.
    await expect(createCase(services.em(), b.clinician, caseInput(pa.id, b.clinician.userId))).rejects.toMatchObject({ status: 422, fieldErrors: { patientId: expect.any(Array) } });
    await expect(createCase(services.em(), b.clinician, caseInput(pb.id, a.clinician.userId))).rejects.toMatchObject({ status: 422, fieldErrors: { operatorId: expect.any(Array) } });

    // Nothing of A changed.
    const still = await getCase(services.em(), a.auditor, ca.id);
    expect([still.archived, still.visits.map((v) => v.status), still.reviews.length]).toEqual([false, ['planned', 'planned', 'planned'], 0]);
    expect((await getPatient(services.em(), a.auditor, pa.id)).archived).toBe(false);
  });
});
