import Papa from 'papaparse';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { env } from '@/lib/env';
import { errorResponse } from '@/lib/http';
import { deriveLinkSecret, issueReplyToken } from '@/lib/recall/reply-token';
import { templateCsv } from '@/lib/registry/csv';
import { createCase, listCases } from '@/lib/services/cases';
import { importCases } from '@/lib/services/import';
import { createPatient, listPatients, updatePatient } from '@/lib/services/patients';
import { addCallNote } from '@/lib/services/recall-contact';
import { answerReply } from '@/lib/services/recall-replies';
import { createReferrer, listReferrers } from '@/lib/services/referrers';
import { createReview } from '@/lib/services/reviews';
import { updateVisit } from '@/lib/services/visits';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

/**
 * Issue 9 item 9, one field of each kind the issue names: a NUL (U+0000) gets a 422 with a
 * message that says which character and where — it was a 500 (PostgreSQL refuses NUL in text).
 * tests/integration/fuzz-routes.test.ts fuzzes every route beside these.
 */
const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const NUL = 'Ash\u0000down';
const CONTROL_MESSAGE = /Remove the invisible control character U\+0000 \(character 4\): it cannot be stored/;

/** The status and field messages the edge would answer. */
async function answer(call: () => Promise<unknown>): Promise<{ status: number; body: { fieldErrors?: Record<string, string[]> } }> {
  try {
    await call();
    return { status: 200, body: {} };
  } catch (e) {
    const res = errorResponse(e);
    return { status: res.status, body: (await res.json()) as { fieldErrors?: Record<string, string[]> } };
  }
}

async function world() {
  const p = await makeRegistryPractice(services.em(), 'bytes');
  const patient = await createPatient(services.em(), p.coordinator, patientInput());
  const c = await createCase(services.em(), p.clinician, caseInput(patient.id, p.clinician.userId));
  const [visit] = (await services.em().getKnex()('recall_visit').where({ case_id: c.id }).orderBy('milestone').select('id')) as { id: string }[];
  return { p, patient, c, visitId: visit!.id };
}

describe('a NUL in a text field is a 422 with a clear message, never a 500', () => {
  it('patient: new and changed', async () => {
    const { p, patient } = await world();
    const created = await answer(() => createPatient(services.em(), p.coordinator, patientInput({ registryNumber: 'T-9', familyName: NUL })));
    expect(created.status).toBe(422);
    expect(created.body.fieldErrors?.familyName?.[0]).toMatch(CONTROL_MESSAGE);
    const changed = await answer(() => updatePatient(services.em(), p.coordinator, patient.id, { givenName: NUL }));
    expect(changed.status).toBe(422);
    expect(changed.body.fieldErrors?.givenName?.[0]).toMatch(CONTROL_MESSAGE);
  });

  it('referrer', async () => {
    const { p } = await world();
    const r = await answer(() => createReferrer(services.em(), p.clinician, { name: 'Dr Quarrender', practiceName: NUL }));
    expect(r.status).toBe(422);
    expect(r.body.fieldErrors?.practiceName?.[0]).toMatch(CONTROL_MESSAGE);
  });

  it('notes: a visit note and a call note', async () => {
    const { p, visitId } = await world();
    const visitNote = await answer(() => updateVisit(services.em(), p.coordinator, visitId, { note: NUL }));
    expect(visitNote.status).toBe(422);
    expect(visitNote.body.fieldErrors?.note?.[0]).toMatch(CONTROL_MESSAGE);
    const callNote = await answer(() => addCallNote(services.em(), p.coordinator, visitId, { note: NUL, reached: false }));
    expect(callNote.status).toBe(422);
    expect(callNote.body.fieldErrors?.note?.[0]).toMatch(CONTROL_MESSAGE);
    // Line breaks stay allowed in notes.
    expect((await answer(() => addCallNote(services.em(), p.coordinator, visitId, { note: 'Rang twice.\r\nNo answer.', reached: false }))).status).toBe(200);
  });

  it('review findings', async () => {
    const { p, c } = await world();
    const r = await answer(() =>
      createReview(services.em(), p.clinician, c.id, { reviewDate: '2025-01-20', toothStatus: 'present', paiScore: 2, lesionDiameterMm: 1, otherFindings: NUL }),
    );
    expect(r.status).toBe(422);
    expect(r.body.fieldErrors?.otherFindings?.[0]).toMatch(CONTROL_MESSAGE);
  });

  it('list search q (patients, cases, referrers)', async () => {
    const { p } = await world();
    for (const list of [listPatients, listCases, listReferrers]) {
      const r = await answer(() => list(services.em(), p.clinician, { q: NUL }));
      expect(r.status).toBe(422);
      expect(r.body.fieldErrors?.q?.[0]).toMatch(CONTROL_MESSAGE);
    }
  });

  it('the public reply form', async () => {
    const { visitId } = await world();
    const { token } = issueReplyToken({ visitId }, deriveLinkSecret(env.NEXTAUTH_SECRET), new Date());
    const r = await answer(() => answerReply(services.em(), { token, answer: 'another_time', note: NUL }, { ip: '127.0.0.9', userAgent: 'vitest' }));
    expect(r.status).toBe(422);
    expect(r.body.fieldErrors?.note?.[0]).toMatch(CONTROL_MESSAGE);
  });

  it('CSV import: the dry run reports the row and column, and a commit writes nothing', async () => {
    const { p } = await world();
    const [header, example] = Papa.parse<string[]>(templateCsv().trim()).data as [string[], string[]];
    const row = [...example];
    row[header.indexOf('operator_email')] = 'cal@bytes.test';
    const bad = [...row];
    bad[header.indexOf('registry_number')] = 'EB-000124';
    bad[header.indexOf('family_name')] = NUL;
    const csv = Papa.unparse({ fields: header, data: [row, bad] }, { newline: '\r\n' });
    const dry = await importCases(services.em(), p.coordinator, { mode: 'dry-run', csv }, { today: '2026-01-01' });
    expect(dry.errors).toEqual([{ line: 3, column: 'family_name', reason: expect.stringMatching(CONTROL_MESSAGE) }]);
    expect(dry.summary).toMatchObject({ validRows: 1, errorCount: 1 });
    const commit = await importCases(services.em(), p.coordinator, { mode: 'commit', csv }, { today: '2026-01-01' });
    expect(commit.committed).toBe(false);
    expect(await services.em().getKnex()('patient').where({ registry_number: 'EB-000124' }).first()).toBeUndefined();
  });
});
