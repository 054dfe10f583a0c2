import ExcelJS from 'exceljs';
import { afterAll, beforeEach, describe, expect, it, vi } from 'vitest';
import { AuditEventSchema, ImportMappingSchema, TreatmentCaseSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import type { ImportResult } from '@/lib/services/import';
import type { ImportPreview } from '@/lib/services/import-file';
import { makeRegistryPractice, openServices, resetData } from '../support/db';

/**
 * Issue 16, the reading layer through the routes: a practice's own UK-style CSV and an .xlsx
 * written here by exceljs are read (POST /api/cases/import/read), mapped, checked and imported
 * (POST /api/cases/import, multipart with the choices); an ambiguous file is refused with the list;
 * the mapping is saved and proposed again. Only the session is replaced (as in fuzz-routes).
 */
const state = vi.hoisted(() => ({ context: undefined as undefined | (() => Promise<unknown>) }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: () => state.context!(),
}));

const services = await openServices();
afterAll(() => services.close());
let actor: Actor;
beforeEach(async () => {
  await resetData(services.orm, services.redis);
  const p = await makeRegistryPractice(services.em(), 'kestrel');
  actor = p.coordinator;
  state.context = async () => ({ em: services.em(), actor });
});

const readRoute = await import('@/app/api/cases/import/read/route');
const importRoute = await import('@/app/api/cases/import/route');

function form(file: Uint8Array, fields: Record<string, string> = {}, name = 'cases.csv'): FormData {
  const f = new FormData();
  f.set('file', new Blob([file as BlobPart]), name);
  for (const [k, v] of Object.entries(fields)) f.set(k, v);
  return f;
}

async function post(fn: (req: Request, ctx: { params: Promise<unknown> }) => Promise<Response>, path: string, body: FormData) {
  const req = new Request(new URL(path, env.APP_URL), {
    method: 'POST',
    headers: { Origin: new URL(env.APP_URL).origin, 'Sec-Fetch-Site': 'same-origin', Accept: 'application/json' },
    body,
  });
  const res = await fn(req, { params: Promise.resolve({}) });
  return { status: res.status, body: (await res.json()) as Record<string, unknown> };
}

const read = async (file: Uint8Array, fields: Record<string, string> = {}, name?: string) => post(readRoute.POST as never, '/api/cases/import/read', form(file, fields, name));
const run = async (mode: 'dry-run' | 'commit', file: Uint8Array, options: unknown, name?: string) =>
  post(importRoute.POST as never, `/api/cases/import?mode=${mode}`, form(file, { options: JSON.stringify(options) }, name));

const utf8 = (text: string, bom = true) => new Uint8Array([...(bom ? [0xef, 0xbb, 0xbf] : []), ...new TextEncoder().encode(text)]);

/** A UK practice's own spreadsheet saved as CSV: semicolons, byte-order mark, DD/MM/YYYY, decimal commas, its own headers. */
const UK_HEADER = 'Pt No;Forename;Surname;DOB;Gender;Recall OK;Contact by;Research;Consent;E-mail;Clinician;Tooth;Treatment;Started;Completed;Pulp;Apical;PAI;Lesion size (mm);Canal 1;Canal 1 WL;Notes';
const ukRow = (no: string, dob: string, sex: string, tooth: string, kind: string, start: string, done: string, lesion: string, wl: string, pulp = 'Pulp necrosis', pai = '4') =>
  `${no};Ada;Fernwhistle${no.slice(-1)};${dob};${sex};Y;e-mail;N;${start};ada${no.slice(-1)}@patients.lamina-demo.invalid;cal@kestrel.test;${tooth};${kind};${start};${done};${pulp};Asymptomatic apical periodontitis;${pai};${lesion};MB;${wl};invented note`;
const UK_CSV = [
  UK_HEADER,
  ukRow('UK-1', '02/11/1968', 'F', '36', 'RCT', '09/05/2023', '23/05/2023', '3,5', '20,5'),
  ukRow('UK-2', '17/03/1975', 'M', '46', 'Retreatment', '01/06/2023', '15/06/2023', '0', '21', 'Previously treated', '2'),
  ukRow('UK-3', '05/04/1990', 'F', '26', 'RCT', '03/07/2023', '04/07/2023', '1,2', '19,5'),
].join('\r\n');

describe('a practice’s own files through the routes (issue 16)', () => {
  it('a UK-style CSV: read, suggestions with why, dry run, commit', async () => {
    const preview = (await read(utf8(UK_CSV))).body as unknown as ImportPreview;
    expect(preview).toMatchObject({ format: 'csv', delimiter: ';', rows: 3, saved: null });
    expect(preview.dateOrder).toMatchObject({ order: 'dmy' });
    expect(preview.dateOrder.reason).toMatch(/above 12/);
    expect(preview.decimalMark).toMatchObject({ mark: ',' });
    expect(preview.proposed.columns).toEqual([
      'registry_number', 'given_name', 'family_name', 'date_of_birth', 'sex', 'recall_contact', 'recall_channel', 'research_use', 'consent_date', 'email',
      'operator_email', 'tooth_fdi', 'kind', 'start_date', 'completion_date', 'pulpal_diagnosis', 'apical_diagnosis', 'pai', 'lesion_mm', 'canal1_name',
      'canal1_working_length_mm', null,
    ]);
    expect(preview.columns[3]!.samples).toContain('02/11/1968');

    const options = { columns: preview.proposed.columns, dateOrder: 'dmy', decimalMark: ',', codes: {} };
    const dry = (await run('dry-run', utf8(UK_CSV), options)).body as unknown as ImportResult;
    expect(dry.errors).toEqual([]);
    expect(dry.summary).toMatchObject({ validRows: 3, newPatients: 3, cases: 3 });
    expect(await services.em().count(TreatmentCaseSchema, {})).toBe(0);

    const done = (await run('commit', utf8(UK_CSV), options)).body as unknown as ImportResult;
    expect(done).toMatchObject({ committed: true, errors: [] });
    const c = await services.em().findOneOrFail(TreatmentCaseSchema, { patient: { registryNumber: 'UK-1' } });
    expect(c).toMatchObject({ tooth: 36, kind: 'primary_treatment', completionDate: '2023-05-23', lesionDiameterMm: 3.5 });
    expect(c.canals[0]).toMatchObject({ name: 'MB', workingLengthMm: 20.5 });
    const re = await services.em().findOneOrFail(TreatmentCaseSchema, { patient: { registryNumber: 'UK-2' } });
    expect(re.kind).toBe('nonsurgical_retreatment');
  });

  it('an .xlsx written by exceljs: a chosen sheet, date cells, numbers, a formula, mapped codes', async () => {
    const wb = new ExcelJS.Workbook();
    wb.addWorksheet('Read me').addRow(['Invented data for a test']);
    const ws = wb.addWorksheet('Endo log');
    ws.addRow(['Patient number', 'First name', 'Last name', 'Born', 'Sex', 'Recall consent', 'Recall by', 'Research consent', 'Consented', 'Patient email', 'Dentist e-mail', 'Zahn', 'Procedure', 'Start', 'Finished', 'Pulp dx', 'Apical dx', 'PAI', 'Lesion', 'Canal 1', 'Canal 1 WL']);
    const d = (y: number, m: number, day: number) => new Date(Date.UTC(y, m - 1, day));
    ws.addRow(['XL-1', 'Bo', 'Quarrel', d(1959, 1, 30), 'M', 'yes', 'Email', 'no', d(2022, 3, 1), 'bo@patients.lamina-demo.invalid', 'cal@kestrel.test', 47, 'Endo', d(2022, 3, 1), d(2022, 3, 15), 'pulp_necrosis', 'asymptomatic_apical_periodontitis', 3, { formula: '1.5*2', result: 3 }, 'M', 19.5]);
    ws.addRow(['XL-2', 'Cy', 'Pellow', d(1988, 8, 8), 'F', 'yes', 'Email', 'yes', d(2022, 4, 2), 'cy@patients.lamina-demo.invalid', 'cal@kestrel.test', 15, 'Endo', d(2022, 4, 2), d(2022, 4, 20), 'pulp_necrosis', 'asymptomatic_apical_periodontitis', 2, 0, 'B', 21]);
    const xlsx = new Uint8Array(await wb.xlsx.writeBuffer());

    const first = (await read(xlsx, {}, 'log.xlsx')).body as unknown as ImportPreview;
    expect(first).toMatchObject({ format: 'xlsx', sheets: ['Read me', 'Endo log'], sheet: 'Read me', rows: 0 });
    const preview = (await read(xlsx, { sheet: 'Endo log' }, 'log.xlsx')).body as unknown as ImportPreview;
    expect(preview).toMatchObject({ sheet: 'Endo log', rows: 2 });
    expect(preview.columns.find((c) => c.header === 'Zahn')!.proposal).toMatchObject({ target: 'tooth_fdi', why: expect.stringMatching(/FDI/) });
    expect(preview.proposed.columns.every((c) => c !== null)).toBe(true);

    const options = { sheet: 'Endo log', columns: preview.proposed.columns, dateOrder: null, decimalMark: '.', codes: {} };
    const unmapped = (await run('dry-run', xlsx, options, 'log.xlsx')).body as unknown as ImportResult;
    expect(unmapped.errors.map((e) => [e.line, e.column, e.value])).toEqual([
      [2, 'Procedure', 'Endo'],
      [3, 'Procedure', 'Endo'],
    ]);
    const mapped = { ...options, codes: { kind: { Endo: 'primary_treatment' } } };
    const done = (await run('commit', xlsx, mapped, 'log.xlsx')).body as unknown as ImportResult;
    expect(done).toMatchObject({ committed: true, errors: [] });
    const c = await services.em().findOneOrFail(TreatmentCaseSchema, { patient: { registryNumber: 'XL-1' } });
    expect(c).toMatchObject({ tooth: 47, kind: 'primary_treatment', startDate: '2022-03-01', completionDate: '2022-03-15', lesionDiameterMm: 3, paiScore: 3 });
  });

  it('an ambiguous file is refused with the list of its dates, and nothing is written', async () => {
    const csv = [UK_HEADER, ukRow('AM-1', '02/11/1968', 'F', '36', 'RCT', '09/05/2023', '10/05/2023', '3,5', '20'), ukRow('AM-2', '03/04/1970', 'M', '46', 'RCT', '01/06/2023', '02/06/2023', '0', '21')].join('\n');
    const preview = (await read(utf8(csv, false))).body as unknown as ImportPreview;
    expect(preview.dateOrder).toMatchObject({ order: null, reason: expect.stringMatching(/cannot tell/) });
    const refused = (await run('commit', utf8(csv, false), { columns: preview.proposed.columns, dateOrder: null, decimalMark: ',' })).body as unknown as ImportResult;
    expect(refused.committed).toBe(false);
    const listed = refused.errors.filter((e) => /choose the file’s date order/.test(e.reason));
    expect(listed.map((e) => [e.line, e.column, e.value])).toEqual([
      [2, 'Completed', '10/05/2023'],
      [2, 'Consent', '09/05/2023'],
      [2, 'DOB', '02/11/1968'],
      [2, 'Started', '09/05/2023'],
      [3, 'Completed', '02/06/2023'],
      [3, 'Consent', '01/06/2023'],
      [3, 'DOB', '03/04/1970'],
      [3, 'Started', '01/06/2023'],
    ]);
    expect(await services.em().count(TreatmentCaseSchema, {})).toBe(0);
  });

  it('the mapping is saved per practice and proposed again for the next file of the layout; audited', async () => {
    const preview = (await read(utf8(UK_CSV))).body as unknown as ImportPreview;
    const columns = [...preview.proposed.columns];
    columns[9] = null; // the practice leaves the e-mail out
    columns[21] = null;
    await run('dry-run', utf8(UK_CSV), { columns, dateOrder: 'dmy', decimalMark: ',', codes: { kind: { Retreatment: 'nonsurgical_retreatment' } } });
    expect(await services.em().count(ImportMappingSchema, { practice: actor.practiceId, template: 'cases' })).toBe(1);
    expect(await services.em().count(AuditEventSchema, { action: 'import.mapping_saved', practiceId: actor.practiceId })).toBe(1);

    // The next file: the same headers (spelt in another case), other rows.
    const next = UK_CSV.replace('Pt No;Forename', 'PT NO;forename').split('\r\n').slice(0, 2).join('\r\n');
    const again = (await read(utf8(next))).body as unknown as ImportPreview;
    expect(again.saved).not.toBeNull();
    expect(again.proposed).toMatchObject({ dateOrder: 'dmy', decimalMark: ',', codes: { kind: { Retreatment: 'nonsurgical_retreatment' } } });
    expect(again.proposed.columns[9]).toBeNull();
    expect(again.proposed.columns[0]).toBe('registry_number');
    // A file the practice sends without choices is read with the saved ones.
    const noChoices = (await post(importRoute.POST as never, '/api/cases/import?mode=dry-run', form(utf8(next), { options: '{}' }))).body as unknown as ImportResult;
    expect(noChoices.errors.filter((e) => e.column === 'E-mail')).toEqual([]);
  });

  it('refuses a file by its content, whatever its name, with a clear 4xx', async () => {
    const png = new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0x0d, 0x49, 0x48, 0x44, 0x52]);
    expect(await read(png, {}, 'cases.xlsx')).toMatchObject({ status: 415 });
    const xls = new Uint8Array([0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1, 0, 0]);
    const refused = await run('dry-run', xls, {}, 'cases.csv');
    expect(refused.status).toBe(415);
    expect(String(refused.body.message)).toMatch(/\.xls/);
    expect(await read(new Uint8Array([0x50, 0x4b, 0x03, 0x04, 9, 9, 9]), {}, 'cases.xlsx')).toMatchObject({ status: 422 });
    // CSV content named .xlsx is read as CSV.
    expect(await read(utf8(UK_CSV), {}, 'cases.xlsx')).toMatchObject({ status: 200, body: { format: 'csv' } });
    expect(await run('dry-run', utf8(UK_CSV), { columns: ['x'] })).toMatchObject({ status: 422 });
    expect((await post(importRoute.POST as never, '/api/cases/import?mode=dry-run', form(utf8(UK_CSV), { options: '{"dateOrder":"dym"}' }))).status).toBe(422);
  });
});
