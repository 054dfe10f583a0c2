import { handler, json, readJson } from '@/lib/http';
import { createPatient, listPatients, PatientListQuery } from '@/lib/services/patients';
import { parseInput } from '@/lib/services/parse';
import { searchParamsObject } from '@/lib/schemas/paging';

/** GET /api/patients?page&pageSize&q&archived=exclude|include|only&sort=name|registryNumber|createdAt&dir → Page<PatientRow>. */
export const GET = handler('patient.read', async ({ req, em, actor }) =>
  listPatients(em, actor, parseInput(PatientListQuery, searchParamsObject(req.url))),
);

/** POST /api/patients (PatientCreateSchema) → 201 { patient: PatientView }. */
export const POST = handler('patient.write', async ({ req, em, actor }) => json({ patient: await createPatient(em, actor, await readJson(req)) }, 201));
