import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema } from '@/entities';
import { createCase, getCase, updateCase } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

/** A retreatment of tooth 36 started after the primary treatment (2024-01-24) was completed. */
const retreatment = (change: Record<string, unknown> = {}) => ({
  kind: 'nonsurgical_retreatment',
  pulpalDiagnosis: 'previously_treated',
  startDate: '2025-03-03',
  completionDate: '2025-03-17',
  ...change,
});

async function world() {
  const em = services.em();
  const a = await makeRegistryPractice(em, 'alder');
  const patient = await createPatient(em, a.clinician, patientInput());
  const primary = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId));
  return { a, patient, primary };
}

describe('link of a case to its tooth’s earlier case', () => {
  it('links a retreatment to the tooth’s earlier case; both case pages show the link; audited', async () => {
    const { a, patient, primary } = await world();
    const later = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, retreatment({ previousCaseId: primary.id })));
    expect(later.values.previousCaseId).toBe(primary.id);
    expect(later.previousCase).toMatchObject({ id: primary.id, kindLabel: 'Primary root canal treatment', completionDate: '2024-01-24' });
    expect(later.laterCases).toEqual([]);
    const earlier = await getCase(services.em(), a.clinician, primary.id);
    expect(earlier.previousCase).toBeNull();
    expect(earlier.laterCases.map((l) => [l.id, l.kindLabel])).toEqual([[later.id, 'Non-surgical retreatment']]);

    // Clearing the link ('' from the form) and setting it again are case updates with the field named.
    const cleared = await updateCase(services.em(), a.clinician, later.id, { previousCaseId: '' });
    expect(cleared.previousCase).toBeNull();
    const relinked = await updateCase(services.em(), a.clinician, later.id, { previousCaseId: primary.id });
    expect(relinked.previousCase?.id).toBe(primary.id);
    // A change of other fields keeps the link.
    expect((await updateCase(services.em(), a.clinician, later.id, { probingDepthMm: 3 })).previousCase?.id).toBe(primary.id);

    const events = await services.em().find(AuditEventSchema, { practiceId: a.practice.id, entityId: later.id }, { orderBy: { at: 'asc' } });
    expect(events.find((e) => e.action === 'case.created')?.detail).toMatchObject({ previousCaseId: primary.id });
    const updates = events.filter((e) => e.action === 'case.updated').map((e) => (e.detail as { fields: string[] }).fields);
    expect(updates.slice(0, 2)).toEqual([['previousCaseId'], ['previousCaseId']]);
  });

  it('refuses a link to another practice’s case as if it did not exist', async () => {
    const { a, patient } = await world();
    const b = await makeRegistryPractice(services.em(), 'birch');
    const theirPatient = await createPatient(services.em(), b.clinician, patientInput());
    const theirs = await createCase(services.em(), b.clinician, caseInput(theirPatient.id, b.clinician.userId));
    const unknown = { status: 422, fieldErrors: { previousCaseId: ['Choose an earlier case of this patient’s tooth.'] } };
    const link = (id: string) => createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, retreatment({ previousCaseId: id })));
    await expect(link(theirs.id)).rejects.toMatchObject(unknown);
    await expect(link('00000000-0000-4000-8000-000000000000')).rejects.toMatchObject(unknown); // same answer as no case at all
    await expect(link('not-an-id')).rejects.toMatchObject({ status: 422 });
  });

  it('refuses another patient’s case, another tooth, an earlier case not completed or completed after the start, and the case itself', async () => {
    const { a, patient, primary } = await world();
    const em = () => services.em();
    const other = await createPatient(em(), a.clinician, patientInput({ registryNumber: 'P-OTHER', givenName: 'Runa', familyName: 'Quill' }));
    const othersCase = await createCase(em(), a.clinician, caseInput(other.id, a.clinician.userId));
    const refused = (change: Record<string, unknown>, message: string | RegExp) =>
      expect(createCase(em(), a.clinician, caseInput(patient.id, a.clinician.userId, retreatment(change)))).rejects.toMatchObject({
        status: 422,
        fieldErrors: { previousCaseId: [expect.stringMatching(message)] },
      });
    await refused({ previousCaseId: othersCase.id }, 'The earlier case is of another patient: choose a case of this patient.');
    await refused({ previousCaseId: primary.id, tooth: 46 }, /^The earlier case treated tooth 36 \(FDI\), not tooth 46/);
    await refused({ previousCaseId: primary.id, startDate: '2024-01-20', completionDate: '2024-02-01' }, /completed on 2024-01-24, after this case started \(2024-01-20\)/);
    const open = await createCase(em(), a.clinician, caseInput(patient.id, a.clinician.userId, { tooth: 26, startDate: '2024-05-01', completionDate: undefined, canals: [] }));
    await refused({ previousCaseId: open.id, tooth: 26 }, /not completed yet/);

    await expect(updateCase(em(), a.clinician, primary.id, { previousCaseId: primary.id })).rejects.toMatchObject({
      status: 422,
      fieldErrors: { previousCaseId: ['A case cannot follow itself: choose an earlier case of the tooth.'] },
    });
  });

  it('keeps one chain per tooth: no second follower, no loop, and the earlier case keeps its tooth, patient and completion', async () => {
    const { a, patient, primary } = await world();
    const em = () => services.em();
    const later = await createCase(em(), a.clinician, caseInput(patient.id, a.clinician.userId, retreatment({ previousCaseId: primary.id })));
    await expect(
      createCase(em(), a.clinician, caseInput(patient.id, a.clinician.userId, retreatment({ startDate: '2025-06-02', completionDate: '2025-06-09', previousCaseId: primary.id }))),
    ).rejects.toMatchObject({ status: 422, fieldErrors: { previousCaseId: [expect.stringMatching(/already followed by a treatment started on 2025-03-03/)] } });
    // No loop, even when the dates allow it (two same-day treatments of tooth 26).
    const sameDay = { tooth: 26, startDate: '2024-06-03', completionDate: '2024-06-03', canals: [{ name: 'P', fillToApexMm: 1 }] };
    const first = await createCase(em(), a.clinician, caseInput(patient.id, a.clinician.userId, sameDay));
    const second = await createCase(em(), a.clinician, caseInput(patient.id, a.clinician.userId, retreatment({ ...sameDay, previousCaseId: first.id })));
    await expect(updateCase(em(), a.clinician, first.id, { previousCaseId: second.id })).rejects.toMatchObject({
      status: 422,
      fieldErrors: { previousCaseId: ['The earlier case already follows this one: choose a case that came before it.'] },
    });
    expect(later.previousCase?.id).toBe(primary.id);

    await expect(updateCase(em(), a.clinician, primary.id, { tooth: 46 })).rejects.toMatchObject({ status: 422, fieldErrors: { tooth: [expect.stringMatching(/later treatment/)] } });
    await expect(updateCase(em(), a.clinician, primary.id, { completionDate: '2025-04-01' })).rejects.toMatchObject({
      status: 422,
      fieldErrors: { completionDate: [expect.stringMatching(/started on 2025-03-03/)] },
    });
    const other = await createPatient(em(), a.clinician, patientInput({ registryNumber: 'P-OTHER', givenName: 'Runa', familyName: 'Quill' }));
    await expect(updateCase(em(), a.clinician, primary.id, { patientId: other.id })).rejects.toMatchObject({ status: 422, fieldErrors: { patientId: expect.any(Array) } });
  });
});
