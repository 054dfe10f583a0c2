import Papa from 'papaparse';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema, PatientSchema, RecallVisitSchema, ReferrerSchema, TreatmentCaseSchema } from '@/entities';
import { templateCsv } from '@/lib/registry/csv';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { listCases } from '@/lib/services/cases';
import { ForbiddenError } from '@/lib/services/errors';
import { importCases, importTemplate, type ImportProgress } from '@/lib/services/import';
import { createPatient } from '@/lib/services/patients';
import { todayIn } from '@/lib/services/registry-common';
import { makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const today = todayIn('Europe/London');
const template = Papa.parse<string[]>(templateCsv().trim()).data;
const HEADER = template[0]!;
const EXAMPLE: Record<string, string> = Object.fromEntries(HEADER.map((h, i) => [h, template[1]![i]!]));

function csv(rows: Record<string, string>[]): string {
  return Papa.unparse({ fields: HEADER, data: rows.map((r) => HEADER.map((c) => r[c] ?? '')) }, { newline: '\r\n' });
}

/** A past case completed `monthsAgo` months ago for patient `reg`, treated by `operator`. */
function row(reg: string, monthsAgo: number, operator: string, change: Record<string, string> = {}): Record<string, string> {
  const completion = addMonthsClamped(today, -monthsAgo);
  return {
    ...EXAMPLE,
    registry_number: reg,
    family_name: `Family${reg.replace(/\W/g, '')}`,
    operator_email: operator,
    start_date: addDaysTo(completion, -14),
    completion_date: completion,
    consent_date: addDaysTo(completion, -14),
    definitive_restoration_date: addDaysTo(completion, 30),
    ...change,
  };
}

describe('CSV import of past cases', () => {
  it('serves the template; a dry run checks and writes nothing; the commit writes patients, cases and recall plans in one go', async () => {
    const a = await makeRegistryPractice(services.em(), 'alder');
    expect(importTemplate()).toMatchObject({ filename: 'lamina-cases-template.csv', body: templateCsv() });
    const op = 'cal@alder.test';
    const file = csv([
      row('EB-1', 28, op), // 6 and 12 months past due (missed), 24 months still in its window
      row('EB-1', 3, op, { tooth_fdi: '46', given_name: '', family_name: '', date_of_birth: '', sex: '', recall_contact: '', recall_channel: '', research_use: '', consent_date: '', email: '' }),
      row('EB-2', 1, 'CLEO@alder.test', { referrer_name: 'Dr Tobin Ashgrove', referrer_email: '' }),
    ]);
    const progress: ImportProgress[] = [];
    const dry = await importCases(services.em(), a.coordinator, { mode: 'dry-run', csv: file }, { onProgress: (p) => void progress.push(p) });
    expect(dry).toMatchObject({ mode: 'dry-run', committed: false, errors: [] });
    expect(dry.summary).toMatchObject({ validRows: 3, newPatients: 2, knownPatients: 0, cases: 3, visits: 9, visitsMissed: 2 });
    expect(dry.rows.map((r) => [r.line, r.registryNumber, r.tooth, r.newPatient, r.visitsMissed])).toEqual([
      [2, 'EB-1', '36', true, 2],
      [3, 'EB-1', '46', true, 0],
      [4, 'EB-2', '36', true, 0],
    ]);
    expect(progress.at(-1)).toMatchObject({ phase: 'check' });
    expect(await services.em().count(TreatmentCaseSchema, {})).toBe(0);
    expect(await services.em().count(PatientSchema, {})).toBe(0);

    progress.length = 0;
    const done = await importCases(services.em(), a.coordinator, { mode: 'commit', csv: file }, { onProgress: (p) => void progress.push(p) });
    expect(done).toMatchObject({ committed: true, errors: [] });
    expect(progress.filter((p) => p.phase === 'insert').at(-1)).toMatchObject({ done: 2 + 2 + 3 + 9, total: 2 + 2 + 3 + 9 });
    const em = services.em();
    expect(await em.count(PatientSchema, { practice: a.practice.id })).toBe(2);
    expect(await em.count(TreatmentCaseSchema, { practice: a.practice.id, source: 'import' })).toBe(3);
    // Two referrers: Ashgrove by e-mail (rows 2-3) and Ashgrove without e-mail (row 4) are told apart.
    expect(await em.count(ReferrerSchema, { practice: a.practice.id })).toBe(2);
    const old = await em.findOneOrFail(TreatmentCaseSchema, { patient: { registryNumber: 'EB-1' }, tooth: 36 });
    expect(old).toMatchObject({ toothGroup: 'molar', canalCount: 3, fillLengthClass: 'within', nextVisitStatus: 'planned' });
    const visits = await em.find(RecallVisitSchema, { case: old.id }, { orderBy: { milestone: 'asc' } });
    expect(visits.map((v) => [v.milestone, v.status])).toEqual([
      [6, 'missed'],
      [12, 'missed'],
      [24, 'planned'],
    ]);
    const second = await em.findOneOrFail(TreatmentCaseSchema, { patient: { registryNumber: 'EB-1' }, tooth: 46 });
    expect(second.operator.id).toBe(a.clinician.userId);
    const list = await listCases(services.em(), a.auditor, { visitStatus: 'missed' });
    expect(list.rows.map((r) => r.id)).toEqual([old.id]);
    const actions = (await em.find(AuditEventSchema, { action: { $like: 'case.import%' } }, { orderBy: { at: 'asc' } })).map((e) => e.action);
    expect(actions).toEqual(['case.import_checked', 'case.imported']);

    // The same file again: every case is already in the registry; nothing is added.
    const again = await importCases(services.em(), a.coordinator, { mode: 'commit', csv: file });
    expect(again.committed).toBe(false);
    expect(again.errors.map((e) => e.line)).toEqual([2, 3, 4]);
    expect(again.errors[0]!.reason).toMatch(/already in the registry/);
    expect(await services.em().count(TreatmentCaseSchema, {})).toBe(3);
  });

  it('a file with one bad row imports nothing and names the row, its column and the reason', async () => {
    const a = await makeRegistryPractice(services.em(), 'alder');
    const op = 'cal@alder.test';
    const rows = Array.from({ length: 40 }, (_, i) => row(`R-${i + 1}`, 2 + (i % 30), op));
    rows[16] = { ...rows[16]!, tooth_fdi: '19' };
    const result = await importCases(services.em(), a.clinician, { mode: 'commit', csv: csv(rows) });
    expect(result.committed).toBe(false);
    expect(result.errors).toEqual([{ line: 18, column: 'tooth_fdi', reason: expect.stringMatching(/19/) }]);
    expect(result.summary).toMatchObject({ validRows: 39, errorCount: 1 });
    expect(await services.em().count(TreatmentCaseSchema, {})).toBe(0);
    expect(await services.em().count(PatientSchema, {})).toBe(0);
    expect(await services.em().count(RecallVisitSchema, {})).toBe(0);

    // Fixed, it imports.
    rows[16] = { ...rows[16]!, tooth_fdi: '17' };
    const fixed = await importCases(services.em(), a.clinician, { mode: 'commit', csv: csv(rows) });
    expect([fixed.committed, fixed.summary.cases]).toEqual([true, 40]);
    expect(await services.em().count(TreatmentCaseSchema, {})).toBe(40);
  });

  it('checks rows against the practice: clinicians by e-mail, future dates, known patients need no details', async () => {
    const a = await makeRegistryPractice(services.em(), 'alder');
    const b = await makeRegistryPractice(services.em(), 'birch');
    const known = await createPatient(services.em(), a.coordinator, patientInput({ registryNumber: 'K-9' }));
    const blankPatient = { given_name: '', family_name: '', date_of_birth: '', sex: '', recall_contact: '', recall_channel: '', research_use: '', consent_date: '', email: '', phone: '', postal_code: '' };
    const file = csv([
      row('K-9', 5, 'cal@alder.test', blankPatient),
      row('N-1', 5, 'cora@alder.test'), // a coordinator is no clinician
      row('N-2', 5, 'cal@birch.test'), // another practice's clinician
      row('N-3', 0, 'cal@alder.test', { completion_date: addDaysTo(today, 3), definitive_restoration_date: '' }),
    ]);
    const r = await importCases(services.em(), a.coordinator, { mode: 'dry-run', csv: file });
    expect(r.errors.map((e) => [e.line, e.column])).toEqual([
      [3, 'operator_email'],
      [4, 'operator_email'],
      [5, 'completion_date'],
    ]);
    expect(r.rows.map((x) => [x.registryNumber, x.newPatient])).toEqual([['K-9', false]]);
    expect(r.summary.knownPatients).toBe(1);
    await expect(importCases(services.em(), a.auditor, { mode: 'dry-run', csv: file })).rejects.toBeInstanceOf(ForbiddenError);
    await expect(importCases(services.em(), a.coordinator, { mode: 'commit', csv: '' })).rejects.toMatchObject({ status: 422 });
    await expect(importCases(services.em(), a.coordinator, { mode: 'later', csv: file })).rejects.toMatchObject({ status: 422 });

    const ok = await importCases(services.em(), a.coordinator, { mode: 'commit', csv: csv([row('K-9', 5, 'cal@alder.test', blankPatient)]) });
    expect(ok.committed).toBe(true);
    const c = await services.em().findOneOrFail(TreatmentCaseSchema, { practice: a.practice.id });
    expect(c.patient.id).toBe(known.id);
    expect(await services.em().count(TreatmentCaseSchema, { practice: b.practice.id })).toBe(0);
  });
});
