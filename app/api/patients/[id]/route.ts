import { handler, readJson } from '@/lib/http';
import { listPatientCases } from '@/lib/services/cases';
import { archivePatient, getPatient, updatePatient } from '@/lib/services/patients';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/** GET /api/patients/:id → { patient: PatientView, cases: CaseRow[] } (the patient page). */
export const GET = handler<P>('patient.read', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  const patient = await getPatient(em, actor, id);
  return { patient, cases: await listPatientCases(em, actor, patient.id) };
});

/** PATCH /api/patients/:id (PatientUpdateSchema; archived: true|false archives or restores) → { patient }. */
export const PATCH = handler<P>('patient.write', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { patient: await updatePatient(em, actor, id, await readJson(req)) };
});

/** DELETE /api/patients/:id archives the patient (nothing is deleted) → { patient }. */
export const DELETE = handler<P>('patient.write', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { patient: await archivePatient(em, actor, id) };
});
