/**
 * CSV import of past, completed cases: the template's columns, the template itself, and the
 * parser that turns a file into valid rows or a list of errors by line and column.
 *
 * One row per case. Patients are identified by the practice's registry number: the first row
 * of a registry number that carries patient details defines the patient, later rows may repeat
 * the same details or leave them blank (different details are an error). A registry number the
 * practice already has (`knownRegistryNumbers`) needs no details. Canals are flattened into
 * groups canal1_… to canal6_… (name, working length, apical size, fill-to-apex distance) — one
 * cell per value, which is what a coordinator can type in a spreadsheet.
 *
 * Values: dates YYYY-MM-DD; yes/no for booleans (also y/n, true/false, 1/0); codes as listed in
 * the README (case and spaces are forgiven: "Primary treatment" reads as primary_treatment);
 * several codes in one cell separated by | (or ; or ,); decimal point or decimal comma.
 *
 * Line numbers are the file's own, 1-based, header = line 1; a row whose quoted cell spans lines
 * is reported at the line it starts on. Parsing is one pass over the text plus one over the rows:
 * linear in the file size. Nothing here touches the database: operator e-mails, referrers and
 * registry numbers are resolved by the import service, which reports by `ValidRow.line`.
 * Cells escaped against spreadsheet formulas by Lamina's CSV writer (lib/csv/write.ts) read
 * back as typed.
 */
import Papa from 'papaparse';
import type { z } from 'zod';
import { buildCaseSchemas, MAX_CANALS, type CaseImport } from '@/lib/schemas/case';
import { PatientCreateSchema, type PatientCreate } from '@/lib/schemas/patient';
import { ReferrerCreateSchema, type ReferrerCreate } from '@/lib/schemas/referrer';
import { readCsvCell, writeCsv } from '@/lib/csv/write';
import { editDistance } from '@/lib/import/mapping';
import { Email } from './fields';

type ValueKind = 'text' | 'date' | 'number' | 'bool' | 'code' | 'codes';
type Group = 'patient' | 'operator' | 'referrer' | 'case' | 'canal';

export interface CsvColumn {
  name: string;
  group: Group;
  /** The header must have this column (its cells may still be blank where the value is optional). */
  required: boolean;
  kind: ValueKind;
  /** The schema field it fills ('canals.workingLengthMm' for canal columns). */
  field: string;
  description: string;
}

const col = (name: string, group: Group, kind: ValueKind, field: string, required: boolean, description: string): CsvColumn => ({
  name,
  group,
  kind,
  field,
  required,
  description,
});

const CANAL_PARTS = [
  { suffix: 'name', field: 'name', kind: 'text', description: 'Canal name, e.g. MB, MB2, DB, P, D, ML, DL, M, B, L.' },
  { suffix: 'working_length_mm', field: 'workingLengthMm', kind: 'number', description: 'Working length in mm (8–35).' },
  { suffix: 'apical_size', field: 'apicalSize', kind: 'number', description: 'Apical preparation, ISO size (06–140).' },
  { suffix: 'fill_to_apex_mm', field: 'fillToApexMm', kind: 'number', description: 'End of the filling to the radiographic apex in mm; negative when beyond (−5 to 10).' },
] as const;

/** The template's columns, in order. */
export const CSV_COLUMNS: readonly CsvColumn[] = [
  col('registry_number', 'patient', 'text', 'registryNumber', true, 'The practice’s patient number; rows with the same number are the same patient.'),
  col('given_name', 'patient', 'text', 'givenName', true, 'Given name (needed on the first row of a new patient).'),
  col('family_name', 'patient', 'text', 'familyName', true, 'Family name (new patient).'),
  col('date_of_birth', 'patient', 'date', 'dateOfBirth', true, 'Date of birth, YYYY-MM-DD (new patient).'),
  col('sex', 'patient', 'code', 'sex', true, 'female, male, other or not_stated (new patient).'),
  col('email', 'patient', 'text', 'email', false, 'Patient e-mail (needed for recalls by e-mail).'),
  col('phone', 'patient', 'text', 'phone', false, 'Patient phone (needed for recalls by phone).'),
  col('postal_code', 'patient', 'text', 'postalCode', false, 'Postal code (needed for recalls by post).'),
  col('recall_contact', 'patient', 'bool', 'recallContact', true, 'yes or no: the patient agrees to be contacted for recalls.'),
  col('recall_channel', 'patient', 'code', 'recallChannel', true, 'email, phone, post, or none when recall_contact is no.'),
  col('research_use', 'patient', 'bool', 'researchUse', true, 'yes or no: the patient agrees to research use of anonymised data.'),
  col('consent_date', 'patient', 'date', 'consentDate', true, 'Date the consent answers were recorded, YYYY-MM-DD.'),
  col('operator_email', 'operator', 'text', 'operatorEmail', true, 'Sign-in e-mail of the clinician who treated the tooth.'),
  col('referrer_name', 'referrer', 'text', 'name', false, 'Referring dentist’s name (blank when self-referred).'),
  col('referrer_practice', 'referrer', 'text', 'practiceName', false, 'Referring practice.'),
  col('referrer_email', 'referrer', 'text', 'email', false, 'Referrer’s e-mail, for outcome reports.'),
  col('tooth_fdi', 'case', 'text', 'tooth', true, 'Tooth in FDI notation (ISO 3950), e.g. 36 — not Universal.'),
  col('kind', 'case', 'code', 'kind', true, 'primary_treatment, nonsurgical_retreatment, apical_surgery, vital_pulp_therapy or regenerative_endodontics.'),
  col('start_date', 'case', 'date', 'startDate', true, 'First treatment visit, YYYY-MM-DD.'),
  col('completion_date', 'case', 'date', 'completionDate', true, 'Completion (canal filling), YYYY-MM-DD.'),
  col('pulpal_diagnosis', 'case', 'code', 'pulpalDiagnosis', true, 'AAE pulpal diagnosis code, e.g. pulp_necrosis.'),
  col('apical_diagnosis', 'case', 'code', 'apicalDiagnosis', true, 'AAE apical diagnosis code, e.g. asymptomatic_apical_periodontitis.'),
  col('pai', 'case', 'number', 'paiScore', true, 'Periapical index before treatment, 1–5.'),
  col('lesion_mm', 'case', 'number', 'lesionDiameterMm', true, 'Largest lesion diameter before treatment in mm; 0 when none.'),
  col('preop_symptoms', 'case', 'codes', 'preopSymptoms', false, 'Symptoms before treatment, separated by |, e.g. pain_on_biting|swelling; blank when none.'),
  col('sinus_tract', 'case', 'bool', 'sinusTract', false, 'yes or no.'),
  col('probing_depth_mm', 'case', 'number', 'probingDepthMm', false, 'Deepest probing depth, whole mm (1–15).'),
  col('filling_technique', 'case', 'code', 'fillingTechnique', false, 'e.g. warm_vertical_compaction, single_cone.'),
  col('sealer_class', 'case', 'code', 'sealerClass', false, 'e.g. epoxy_resin, calcium_silicate.'),
  col('apical_patency', 'case', 'bool', 'apicalPatency', false, 'yes or no: apical patency kept.'),
  col('complications', 'case', 'codes', 'complications', false, 'perforation|separated_instrument|ledge|material_beyond_apex; blank when none.'),
  col('fill_density', 'case', 'code', 'fillDensity', false, 'homogeneous or voids.'),
  col('root_end_filling', 'case', 'code', 'rootEndFilling', false, 'Apical surgery only, e.g. calcium_silicate.'),
  col('pulp_therapy_type', 'case', 'code', 'pulpTherapyType', false, 'Vital pulp therapy only, e.g. full_pulpotomy.'),
  col('capping_material', 'case', 'code', 'cappingMaterial', false, 'Vital pulp therapy or regenerative procedure, e.g. calcium_silicate.'),
  col('coronal_restoration', 'case', 'code', 'coronalRestoration', false, 'At completion, e.g. temporary, direct_composite.'),
  col('definitive_restoration', 'case', 'code', 'definitiveRestoration', false, 'e.g. crown, onlay, direct_composite.'),
  col('definitive_restoration_date', 'case', 'date', 'definitiveRestorationDate', false, 'YYYY-MM-DD.'),
  ...Array.from({ length: MAX_CANALS }, (_, i) =>
    CANAL_PARTS.map((p) =>
      col(`canal${i + 1}_${p.suffix}`, 'canal', p.kind, `canals.${p.field}`, false, `Canal ${i + 1}: ${p.description}`),
    ),
  ).flat(),
];

const COLUMN_BY_NAME = new Map(CSV_COLUMNS.map((c) => [c.name, c]));
const PATIENT_COLUMNS = CSV_COLUMNS.filter((c) => c.group === 'patient' && c.name !== 'registry_number');
const REFERRER_COLUMNS = CSV_COLUMNS.filter((c) => c.group === 'referrer');
const CASE_COLUMNS = CSV_COLUMNS.filter((c) => c.group === 'case');
const PATIENT_FIELD_COLUMN = new Map(CSV_COLUMNS.filter((c) => c.group === 'patient').map((c) => [c.field, c.name]));
const REFERRER_FIELD_COLUMN = new Map(REFERRER_COLUMNS.map((c) => [c.field, c.name]));
const CASE_FIELD_COLUMN = new Map(CASE_COLUMNS.map((c) => [c.field, c.name]));
const CANAL_FIELD_SUFFIX = new Map<string, string>(CANAL_PARTS.map((p) => [p.field, p.suffix]));
const CANAL_COLUMNS: readonly CsvColumn[][] = Array.from({ length: MAX_CANALS }, (_, i) =>
  CANAL_PARTS.map((p) => COLUMN_BY_NAME.get(`canal${i + 1}_${p.suffix}`)!),
);

// --- template -----------------------------------------------------------------------------------

/** One invented example row (no real person; the e-mail domain is reserved). */
const EXAMPLE: Record<string, string> = {
  registry_number: 'EB-000123',
  given_name: 'Orla',
  family_name: 'Pennymoss',
  date_of_birth: '1968-11-02',
  sex: 'female',
  email: 'orla.pennymoss@patients.lamina-demo.invalid',
  phone: '07700 900456',
  postal_code: 'ZZ3 7LB',
  recall_contact: 'yes',
  recall_channel: 'email',
  research_use: 'yes',
  consent_date: '2023-05-09',
  operator_email: 'clinician@lamina-demo.invalid',
  referrer_name: 'Dr Tobin Ashgrove',
  referrer_practice: 'Gullsett Dental',
  referrer_email: 'tobin.ashgrove@referrers.lamina-demo.invalid',
  tooth_fdi: '36',
  kind: 'primary_treatment',
  start_date: '2023-05-09',
  completion_date: '2023-05-23',
  pulpal_diagnosis: 'pulp_necrosis',
  apical_diagnosis: 'asymptomatic_apical_periodontitis',
  pai: '4',
  lesion_mm: '3.5',
  preop_symptoms: 'pain_on_biting|tender_to_percussion',
  sinus_tract: 'no',
  probing_depth_mm: '3',
  filling_technique: 'continuous_wave',
  sealer_class: 'epoxy_resin',
  apical_patency: 'yes',
  complications: '',
  fill_density: 'homogeneous',
  coronal_restoration: 'direct_composite',
  definitive_restoration: 'crown',
  definitive_restoration_date: '2023-07-04',
  canal1_name: 'MB',
  canal1_working_length_mm: '20.5',
  canal1_apical_size: '30',
  canal1_fill_to_apex_mm: '0.5',
  canal2_name: 'ML',
  canal2_working_length_mm: '20',
  canal2_apical_size: '30',
  canal2_fill_to_apex_mm: '1',
  canal3_name: 'D',
  canal3_working_length_mm: '21',
  canal3_apical_size: '40',
  canal3_fill_to_apex_mm: '1.5',
};

/** The downloadable template: the header and one invented example row, CRLF line ends. */
export function templateCsv(): string {
  const header = CSV_COLUMNS.map((c) => c.name);
  return writeCsv(header, [header.map((h) => EXAMPLE[h] ?? '')]);
}

// --- parsing ------------------------------------------------------------------------------------

export interface CsvError {
  line: number;
  column?: string;
  /** The cell as written, when the reason is about it (mapped files). */
  value?: string;
  reason: string;
}

export interface ValidRow {
  /** The file line the row starts on. */
  line: number;
  registryNumber: string;
  /** The patient's details; null when the registry number is known and the file gives none. */
  patient: PatientCreate | null;
  /** Lower-cased; the service finds the clinician by it. */
  operatorEmail: string;
  referrer: ReferrerCreate | null;
  case: CaseImport;
}

export interface ParseCasesResult {
  rows: ValidRow[];
  errors: CsvError[];
}

export interface ParseCasesOptions {
  /** Registry numbers the practice already has: rows for them need no patient details. */
  knownRegistryNumbers?: Iterable<string>;
  /** The practice accepts primary teeth (see lib/teeth). */
  allowPrimaryTeeth?: boolean;
}

export interface RawRow {
  line: number;
  cells: string[];
}

/**
 * Reads a CSV file of past cases. `rows` holds the rows that are valid on their own; the import
 * commits only when `errors` is empty. Errors are in line order.
 */
export function parseCasesCsv(text: string, options: ParseCasesOptions = {}): ParseCasesResult {
  const errors: CsvError[] = [];
  const { header, rows: records } = readRecords(text, errors);
  if (!header) return { rows: [], errors };
  return parseCaseRecords(header, records, options, errors);
}

/**
 * Checks rows already split into cells, with their file lines: the canonical rows of a mapped
 * spreadsheet (lib/import normalises a practice's own CSV or .xlsx to the template's header and
 * forms). `header` holds template column names; the same rules as `parseCasesCsv` apply.
 */
export function parseCaseRecords(
  header: string[],
  records: { line: number; cells: string[] }[],
  options: ParseCasesOptions = {},
  errors: CsvError[] = [],
): ParseCasesResult {
  const index = checkHeader(header, errors);
  if (!index) return { rows: [], errors };

  const { CaseImportSchema } = options.allowPrimaryTeeth ? buildCaseSchemas({ allowPrimaryTeeth: true }) : DEFAULT_SCHEMAS;
  const known = new Set([...(options.knownRegistryNumbers ?? [])].map((r) => r.trim()));
  const patients = new Map<string, PatientEntry>();
  const caseKeys = new Map<string, number>();
  const drafts: RowDraft[] = [];

  for (const record of records) {
    const before = errors.length;
    const report = (column: string | undefined, reason: string) => errors.push({ line: record.line, ...(column ? { column } : {}), reason });
    const cell = (name: string) => {
      const i = index.get(name);
      // A file Lamina wrote escapes formula-like cells ('=…); read them back as typed.
      if (i === undefined) return '';
      const v = (record.cells[i] ?? '').trim();
      return v.charCodeAt(0) === 39 ? readCsvCell(v).trim() : v;
    };
    if (record.cells.slice(header.length).some((c) => c.trim() !== '')) {
      report(undefined, `The row has ${record.cells.length} cells but the header has ${header.length}: check for an unquoted comma.`);
      continue;
    }

    const registryNumber = cell('registry_number');
    const entry = registryNumber ? patientOf(registryNumber, record.line) : undefined;
    if (!registryNumber) report('registry_number', 'Enter the registry number.');
    readPatient(entry, record.line, cell, report);
    const operatorEmail = readOperator(cell, report);
    const referrer = readReferrer(cell, report);
    const caseData = readCase(CaseImportSchema, cell, report);

    if (registryNumber && caseData) {
      const key = `${registryNumber}|${caseData.tooth}|${caseData.kind}|${caseData.startDate}`;
      const first = caseKeys.get(key);
      if (first !== undefined) {
        report(undefined, `The same case (patient ${registryNumber}, tooth ${caseData.tooth}, ${caseData.kind}, started ${caseData.startDate}) is on line ${first} already.`);
      } else caseKeys.set(key, record.line);
    }
    if (errors.length === before && entry && caseData && operatorEmail) {
      drafts.push({ line: record.line, entry, operatorEmail, referrer, case: caseData });
    }
  }

  // A new patient needs details on one of their rows; rows of a patient with invalid details fail too.
  for (const entry of patients.values()) {
    if (entry.definedAt === undefined && !entry.known) {
      errors.push({
        line: entry.firstLine,
        column: 'given_name',
        reason: `Patient ${entry.registryNumber} is new: give their details (given_name, family_name, date_of_birth, sex, consents) on one of their rows.`,
      });
    }
  }
  const rows: ValidRow[] = [];
  for (const d of drafts) {
    const e = d.entry;
    if (!e.valid) {
      errors.push({ line: d.line, column: 'registry_number', reason: `The details of patient ${e.registryNumber} on line ${e.definedAt} are invalid.` });
    } else if (e.definedAt !== undefined || e.known) {
      rows.push({ line: d.line, registryNumber: e.registryNumber, patient: e.patient, operatorEmail: d.operatorEmail, referrer: d.referrer, case: d.case });
    }
  }
  errors.sort((a, b) => a.line - b.line);
  return { rows, errors };

  function patientOf(registryNumber: string, line: number): PatientEntry {
    let entry = patients.get(registryNumber);
    if (!entry) {
      entry = { registryNumber, firstLine: line, definedAt: undefined, patient: null, values: {}, valid: true, known: known.has(registryNumber) };
      patients.set(registryNumber, entry);
    }
    return entry;
  }
}

const DEFAULT_SCHEMAS = buildCaseSchemas();

interface PatientEntry {
  registryNumber: string;
  firstLine: number;
  /** The line whose details define the patient. */
  definedAt: number | undefined;
  patient: PatientCreate | null;
  /** The converted details of that line, to compare later rows with. */
  values: Record<string, unknown>;
  valid: boolean;
  known: boolean;
}

interface RowDraft {
  line: number;
  entry: PatientEntry;
  operatorEmail: string;
  referrer: ReferrerCreate | null;
  case: CaseImport;
}

type Cell = (name: string) => string;
type Report = (column: string | undefined, reason: string) => void;

function readPatient(entry: PatientEntry | undefined, line: number, cell: Cell, report: Report): void {
  const converted = convertGroup(PATIENT_COLUMNS, cell, report);
  if (!entry || !PATIENT_COLUMNS.some((c) => cell(c.name) !== '')) return;
  if (entry.definedAt === undefined) {
    entry.definedAt = line;
    const parsed = PatientCreateSchema.safeParse({ registryNumber: entry.registryNumber, ...converted.values });
    entry.values = converted.values;
    if (parsed.success) entry.patient = parsed.data;
    else {
      entry.valid = false;
      const columnOf = (path: PropertyKey[]) => (path[0] === undefined ? undefined : PATIENT_FIELD_COLUMN.get(String(path[0])));
      for (const e of columnIssues(parsed.error, columnOf, converted.failed, cell)) report(e.column, e.reason);
    }
    return;
  }
  for (const c of PATIENT_COLUMNS) {
    if (cell(c.name) === '' || converted.failed.has(c.name)) continue;
    if (JSON.stringify(converted.values[c.field]) !== JSON.stringify(entry.values[c.field])) {
      report(c.name, `“${cell(c.name)}” differs from line ${entry.definedAt} for patient ${entry.registryNumber}: give the same details or leave them blank.`);
    }
  }
}

function readOperator(cell: Cell, report: Report): string | undefined {
  const raw = cell('operator_email');
  if (!raw) {
    report('operator_email', 'Enter the e-mail of the clinician who treated the tooth.');
    return undefined;
  }
  const parsed = Email.safeParse(raw);
  if (!parsed.success) {
    report('operator_email', `“${raw}” is not an e-mail address.`);
    return undefined;
  }
  return parsed.data;
}

function readReferrer(cell: Cell, report: Report): ReferrerCreate | null {
  if (!REFERRER_COLUMNS.some((c) => cell(c.name) !== '')) return null;
  const converted = convertGroup(REFERRER_COLUMNS, cell, report);
  const parsed = ReferrerCreateSchema.safeParse(converted.values);
  if (parsed.success) return parsed.data;
  const columnOf = (path: PropertyKey[]) => REFERRER_FIELD_COLUMN.get(String(path[0]));
  for (const e of columnIssues(parsed.error, columnOf, converted.failed, cell)) report(e.column, e.reason);
  return null;
}

function readCase(schema: typeof DEFAULT_SCHEMAS.CaseImportSchema, cell: Cell, report: Report): CaseImport | undefined {
  const converted = convertGroup(CASE_COLUMNS, cell, report);
  const groups: number[] = [];
  const canals: Record<string, unknown>[] = [];
  for (let n = 1; n <= MAX_CANALS; n++) {
    const columns = CANAL_COLUMNS[n - 1]!;
    if (columns.every((c) => cell(c.name) === '')) continue;
    const canal = convertGroup(columns, cell, report, (field) => field.slice('canals.'.length));
    groups.push(n);
    canals.push(canal.values);
    for (const f of canal.failed) converted.failed.add(f);
  }
  if (canals.length > 0) converted.values.canals = canals;
  const parsed = schema.safeParse(converted.values);
  if (parsed.success) return parsed.data;
  const columnOf = (path: PropertyKey[]) => {
    if (path[0] !== 'canals') return path[0] === undefined ? undefined : CASE_FIELD_COLUMN.get(String(path[0]));
    if (typeof path[1] !== 'number') return `canal${groups[0] ?? 1}_name`;
    return `canal${groups[path[1]] ?? path[1] + 1}_${CANAL_FIELD_SUFFIX.get(String(path[2] ?? 'name')) ?? 'name'}`;
  };
  for (const e of columnIssues(parsed.error, columnOf, converted.failed, cell)) report(e.column, e.reason);
  return undefined;
}

/** Splits the text into records with the line each starts on. */
export function readRecords(text: string, errors: CsvError[]): { header: string[] | null; rows: RawRow[] } {
  const normalised = text.replace(/^\uFEFF/, '').replace(/\r\n?/g, '\n');
  if (normalised.trim() === '') {
    errors.push({ line: 1, reason: 'The file is empty: start from the template, which has the header on line 1.' });
    return { header: null, rows: [] };
  }
  const rows: RawRow[] = [];
  let header: string[] | null = null;
  let lastCursor = 0;
  let line = 1;
  Papa.parse<string[]>(normalised, {
    delimitersToGuess: [',', ';', '\t'],
    newline: '\n',
    skipEmptyLines: false,
    step: (result) => {
      const start = lastCursor;
      const startLine = line;
      const end = result.meta.cursor;
      for (let i = start; i < end; i++) if (normalised.charCodeAt(i) === 10) line++;
      lastCursor = end;
      const cells = result.data;
      for (const e of result.errors) {
        if (e.code === 'UndetectableDelimiter') continue;
        errors.push({ line: startLine, reason: `The row cannot be read: ${e.message.replace(/\.$/, '')} (check the quotes).` });
      }
      if (cells.length === 1 && cells[0]!.trim() === '') return; // blank line
      if (!header) header = cells;
      else rows.push({ line: startLine, cells });
    },
  });
  return { header, rows };
}

function checkHeader(header: string[], errors: CsvError[]): Map<string, number> | null {
  const index = new Map<string, number>();
  const before = errors.length;
  header.forEach((raw, i) => {
    const name = raw.trim().toLowerCase();
    if (name === '') {
      if (i === header.length - 1) return; // a trailing delimiter
      errors.push({ line: 1, reason: `Column ${i + 1} of the header has no name.` });
      return;
    }
    if (!COLUMN_BY_NAME.has(name)) {
      const near = nearest(name);
      errors.push({ line: 1, column: raw.trim(), reason: `Unknown column “${raw.trim()}”${near ? `; did you mean “${near}”?` : '.'}` });
      return;
    }
    if (index.has(name)) {
      errors.push({ line: 1, column: name, reason: `Column “${name}” appears twice (columns ${index.get(name)! + 1} and ${i + 1}).` });
      return;
    }
    index.set(name, i);
  });
  for (const c of CSV_COLUMNS) {
    if (c.required && !index.has(c.name)) errors.push({ line: 1, column: c.name, reason: `The header lacks the column “${c.name}”.` });
  }
  return errors.length === before ? index : null;
}

/** The known column nearest to a misspelt one (edit distance at most 3). */
function nearest(name: string): string | undefined {
  let best: string | undefined;
  let bestDistance = 4;
  for (const c of CSV_COLUMNS) {
    const d = editDistance(name, c.name);
    if (d < bestDistance) {
      best = c.name;
      bestDistance = d;
    }
  }
  return best;
}

/** Converted cells keyed by schema field, and the columns whose cell could not be converted. */
type Converted = { values: Record<string, unknown>; failed: Set<string> };

/** Converts the cells of some columns into schema input; blank cells are left out. */
function convertGroup(columns: readonly CsvColumn[], cell: Cell, report: Report, fieldOf: (field: string) => string = (f) => f): Converted {
  const values: Record<string, unknown> = {};
  const failed = new Set<string>();
  for (const c of columns) {
    const text = cell(c.name);
    if (text === '') continue;
    const r = convert(c.kind, text);
    if (r.ok) values[fieldOf(c.field)] = r.value;
    else {
      failed.add(c.name);
      report(c.name, r.reason);
    }
  }
  return { values, failed };
}

type Conversion = { ok: true; value: unknown } | { ok: false; reason: string };

const TRUE_WORDS = new Set(['yes', 'y', 'true', '1']);
const FALSE_WORDS = new Set(['no', 'n', 'false', '0']);

function convert(kind: ValueKind, text: string): Conversion {
  switch (kind) {
    case 'text':
      return { ok: true, value: text };
    case 'date':
      if (/^\d{1,2}[./-]\d{1,2}[./-]\d{2,4}$/.test(text)) {
        return { ok: false, reason: `“${text}” looks like a spreadsheet date: write dates as YYYY-MM-DD (format the column as text before typing).` };
      }
      return { ok: true, value: text };
    case 'number': {
      const t = text.replace(/^(-?\d+),(\d+)$/, '$1.$2').replace(/^\u2212/, '-');
      if (/^-?(\d+\.?\d*|\.\d+)$/.test(t)) return { ok: true, value: Number(t) };
      if (/^-?\d+([.,]\d+)?\s*[a-zµ]+$/i.test(text)) return { ok: false, reason: `“${text}”: write the number without the unit.` };
      return { ok: false, reason: `“${text}” is not a number.` };
    }
    case 'bool': {
      const w = text.toLowerCase();
      if (TRUE_WORDS.has(w)) return { ok: true, value: true };
      if (FALSE_WORDS.has(w)) return { ok: true, value: false };
      return { ok: false, reason: `“${text}”: write yes or no.` };
    }
    case 'code':
      return { ok: true, value: code(text) };
    case 'codes':
      return {
        ok: true,
        value: text
          .split(/[|;,]/)
          .map((s) => s.trim())
          .filter(Boolean)
          .map(code),
      };
  }
}

/** "Primary treatment" / "primary-treatment" → "primary_treatment". */
function code(text: string): string {
  return text.trim().toLowerCase().replace(/[\s-]+/g, '_');
}

/** Zod issues as column errors, leaving out columns whose cell already failed to convert. */
export function columnIssues(
  error: z.ZodError,
  columnOf: (path: PropertyKey[]) => string | undefined,
  failedColumns: Set<string>,
  cell: Cell,
): { column?: string; reason: string }[] {
  const out: { column?: string; reason: string }[] = [];
  const seen = new Set<string>();
  for (const issue of error.issues) {
    const column = columnOf(issue.path);
    if (column && failedColumns.has(column)) continue;
    const value = column ? cell(column) : '';
    const reason = value ? `${issue.message.replace(/\.$/, '')} (found “${value}”).` : issue.message;
    const key = `${column}|${reason}`;
    if (seen.has(key)) continue;
    seen.add(key);
    out.push(column ? { column, reason } : { reason });
  }
  return out;
}
