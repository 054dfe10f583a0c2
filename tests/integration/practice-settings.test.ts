import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema } from '@/entities';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { createCase, listCases } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { getPracticeSettings, updatePracticeSettings } from '@/lib/services/practice-settings';
import { todayIn } from '@/lib/services/registry-common';
import { ForbiddenError, ValidationError } from '@/lib/services/errors';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

describe('practice settings', () => {
  it('an added 48-month milestone applies to cases completed afterwards; the change is audited', async () => {
    const a = await makeRegistryPractice(services.em(), 'alder');
    const patient = await createPatient(services.em(), a.clinician, patientInput());
    const completion = addMonthsClamped(todayIn('Europe/London'), -1);
    const input = (tooth: number) => caseInput(patient.id, a.clinician.userId, { tooth, startDate: addDaysTo(completion, -10), completionDate: completion });
    const before = await createCase(services.em(), a.clinician, input(36));
    expect(before.visits.map((v) => v.milestone)).toEqual([6, 12, 24]);

    const settings = await getPracticeSettings(services.em(), a.admin);
    await updatePracticeSettings(services.em(), a.admin, {
      recallPolicy: { milestones: [...settings.recallPolicy.milestones, { months: 48 }] },
    });
    const after = await createCase(services.em(), a.clinician, input(46));
    expect(after.visits.map((v) => v.milestone)).toEqual([6, 12, 24, 48]);
    expect(after.visits.at(-1)!.dueDate).toBe(addMonthsClamped(completion, 48));
    // The earlier plan stays as it was.
    expect((await listCases(services.em(), a.clinician, { patient: patient.id })).rows).toHaveLength(2);
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'practice.settings_changed' });
    expect(event.actorId).toBe(a.admin.userId);
    expect(JSON.parse(String(event.detail!.after))).toMatchObject({ recallMonths: [6, 12, 24, 48] });
  });

  it('Universal numbering changes how teeth are shown, not how they are stored', async () => {
    const a = await makeRegistryPractice(services.em(), 'birch');
    const patient = await createPatient(services.em(), a.clinician, patientInput());
    const completion = addMonthsClamped(todayIn('Europe/London'), -1);
    await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { tooth: 36, startDate: addDaysTo(completion, -10), completionDate: completion }));
    await updatePracticeSettings(services.em(), a.admin, { toothNotation: 'universal' });
    const page = await listCases(services.em(), a.clinician, {});
    // FDI 36 = Universal 19 (ADA Universal chart).
    expect(page.rows[0]).toMatchObject({ tooth: '19', toothFdi: 36 });
  });

  it('the practice’s address, phone and e-mail: set, cleared, checked and audited', async () => {
    const a = await makeRegistryPractice(services.em(), 'dunes');
    expect((await getPracticeSettings(services.em(), a.admin)).contact).toEqual({ address: null, phone: null, contactEmail: null });
    const set = await updatePracticeSettings(services.em(), a.admin, {
      contact: { address: ' 3 Saltmarsh Lane, Ellery Bay ', phone: '020 7946 0101', contactEmail: 'desk@dunes.invalid' },
    });
    expect(set.contact).toEqual({ address: '3 Saltmarsh Lane, Ellery Bay', phone: '020 7946 0101', contactEmail: 'desk@dunes.invalid' });
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'practice.settings_changed' });
    expect(event.actorId).toBe(a.admin.userId);
    expect(JSON.parse(String(event.detail!.before))).toMatchObject({ phone: null });
    expect(JSON.parse(String(event.detail!.after))).toMatchObject({ address: '3 Saltmarsh Lane, Ellery Bay', phone: '020 7946 0101', contactEmail: 'desk@dunes.invalid' });
    // Empty clears one field; the others stay.
    const cleared = await updatePracticeSettings(services.em(), a.admin, { contact: { phone: '' } });
    expect(cleared.contact).toEqual({ address: '3 Saltmarsh Lane, Ellery Bay', phone: null, contactEmail: 'desk@dunes.invalid' });
    await expect(updatePracticeSettings(services.em(), a.admin, { contact: { phone: 'call me' } })).rejects.toBeInstanceOf(ValidationError);
    await expect(updatePracticeSettings(services.em(), a.admin, { contact: { contactEmail: 'desk at dunes' } })).rejects.toBeInstanceOf(ValidationError);
    await expect(updatePracticeSettings(services.em(), a.coordinator, { contact: { phone: '020 7946 0101' } })).rejects.toBeInstanceOf(ForbiddenError);
  });

  it('refuses overlapping windows, an empty patch and other roles', async () => {
    const a = await makeRegistryPractice(services.em(), 'cedar');
    await expect(
      updatePracticeSettings(services.em(), a.admin, { recallPolicy: { milestones: [{ months: 6, windowAfterDays: 200 }, { months: 12 }] } }),
    ).rejects.toBeInstanceOf(ValidationError);
    await expect(updatePracticeSettings(services.em(), a.admin, {})).rejects.toBeInstanceOf(ValidationError);
    await expect(updatePracticeSettings(services.em(), a.coordinator, { toothNotation: 'universal' })).rejects.toBeInstanceOf(ForbiddenError);
    await expect(getPracticeSettings(services.em(), a.clinician)).rejects.toBeInstanceOf(ForbiddenError);
  });
});
