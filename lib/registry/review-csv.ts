/**
 * The review import's template (issue 16): past follow-up reviews, one row per review, and the
 * parser that turns canonical rows (the template's headers, ISO dates, decimal points, canonical
 * codes — what lib/import's reading layer produces from a practice's own file, and what a file
 * typed in the template already is) into valid review rows or errors by line and column.
 *
 * A row names its case by the patient's registry number and the FDI tooth, or by the case's
 * reference (its id, or the first 8 characters of it as Lamina shows them); the import service
 * attaches it (lib/registry/review-import.ts). The findings are those of the review form —
 * tooth status, PAI and lesion diameter for a present tooth, signs yes/no (blank: not recorded),
 * the event's own date and an extraction's reason — validated by the one review schema
 * (lib/schemas/review.ts ReviewImportSchema). There is no outcome column: outcomes are computed
 * by the scoring rules, never read from a file. Pure: no database.
 */
import { writeCsv, readCsvCell } from '@/lib/csv/write';
import { YES_NO_CODES, type CanonicalRow, type TemplateColumn, type TemplateDescriptor } from '@/lib/import/template';
import { EXTRACTION_REASONS, EXTRACTION_REASON_LABELS, ReviewImportSchema, REVIEW_SIGN_LABELS, TOOTH_STATUSES, TOOTH_STATUS_LABELS, type ReviewImport, type ReviewSign } from '@/lib/schemas/review';
import { parseFdi } from '@/lib/teeth/notation';
import { columnIssues, readRecords, type CsvError } from './csv';
import { Email } from './fields';

/** Sign columns of the template and the review field each fills. */
export const SIGN_COLUMNS: readonly { key: string; sign: ReviewSign }[] = [
  { key: 'pain_on_biting', sign: 'painOnBiting' },
  { key: 'tender_to_percussion', sign: 'tenderToPercussion' },
  { key: 'tender_to_palpation', sign: 'tenderToPalpation' },
  { key: 'spontaneous_pain', sign: 'spontaneousPain' },
  { key: 'swelling', sign: 'swelling' },
  { key: 'sinus_tract', sign: 'sinusTract' },
  { key: 'mobility', sign: 'mobility' },
];

const SIGN_SYNONYMS: Record<string, string[]> = {
  pain_on_biting: ['pain', 'biting pain', 'pain biting'],
  tender_to_percussion: ['ttp', 'percussion', 'tender percussion', 'percussion tenderness'],
  tender_to_palpation: ['palpation', 'tender palpation'],
  spontaneous_pain: ['spontaneous'],
  swelling: ['swollen'],
  sinus_tract: ['sinus', 'fistula'],
  mobility: ['mobile', 'increased mobility'],
};

/** The review template, described for the reading layer (lib/import/template.ts). */
export const REVIEW_TEMPLATE: TemplateDescriptor = {
  id: 'reviews',
  label: 'Past reviews',
  columns: [
    { key: 'registry_number', label: 'Registry number', kind: 'text', hint: 'identifier', synonyms: ['patient number', 'patient id', 'reg no'], description: 'The practice’s patient number (with tooth_fdi; or give case_ref).' },
    { key: 'tooth_fdi', label: 'Tooth (FDI)', kind: 'text', hint: 'fdi_tooth', synonyms: ['tooth', 'fdi'], description: 'Tooth in FDI notation (ISO 3950), e.g. 36.' },
    { key: 'case_ref', label: 'Case reference', kind: 'text', synonyms: ['case', 'case id'], description: 'Optional: the case’s reference as Lamina shows it (first 8 characters of its id), instead of registry number and tooth.' },
    { key: 'review_date', label: 'Review date', kind: 'date', required: true, synonyms: ['date', 'recall date', 'follow-up date'], description: 'Day of the review, YYYY-MM-DD.' },
    {
      key: 'tooth_status',
      label: 'Tooth status',
      kind: 'code',
      required: true,
      synonyms: ['status', 'event'],
      codes: TOOTH_STATUSES.map((code) => ({
        code,
        label: TOOTH_STATUS_LABELS[code],
        synonyms: { present: ['in situ', 'retained'], extracted: ['extraction', 'xla', 'lost'], retreated: ['retreatment', 'retx', 'redo'], surgery: ['apical surgery', 'apicectomy', 'apicoectomy', 'surgical'] }[code],
      })),
      description: 'present, extracted, retreated or surgery (apical surgery done).',
    },
    { key: 'pai', label: 'PAI', kind: 'number', min: 1, max: 5, synonyms: ['pai score', 'periapical index'], description: 'Periapical index at the review, 1–5 (a present tooth).' },
    { key: 'lesion_mm', label: 'Lesion (mm)', kind: 'number', min: 0, max: 30, synonyms: ['lesion', 'lesion diameter'], description: 'Largest lesion diameter in mm; 0 when none (a present tooth).' },
    ...SIGN_COLUMNS.map(
      (s): TemplateColumn => ({ key: s.key, label: REVIEW_SIGN_LABELS[s.sign], kind: 'code', codes: YES_NO_CODES, synonyms: SIGN_SYNONYMS[s.key], description: 'yes or no; blank when not recorded.' }),
    ),
    { key: 'event_date', label: 'Event date', kind: 'date', synonyms: ['extraction date', 'date of event'], description: 'Day the tooth was extracted, retreated or operated, when not the review date.' },
    {
      key: 'extraction_reason',
      label: 'Extraction reason',
      kind: 'code',
      synonyms: ['reason'],
      codes: EXTRACTION_REASONS.map((code) => ({ code, label: EXTRACTION_REASON_LABELS[code], synonyms: { endodontic: ['endo', 'persistent disease'], fracture: ['fractured', 'vrf', 'cracked'], periodontal: ['perio'], other: [] }[code] })),
      description: 'An extracted tooth: endodontic, fracture, periodontal or other.',
    },
    { key: 'other_findings', label: 'Other findings', kind: 'text', synonyms: ['notes', 'comment'], description: 'Free text, up to 500 characters.' },
    { key: 'assessor_email', label: 'Assessor e-mail', kind: 'text', required: true, hint: 'email', synonyms: ['assessor', 'clinician', 'reviewer'], description: 'Sign-in e-mail of the practice clinician who assessed the review.' },
  ],
};

export const REVIEW_COLUMN_KEYS = REVIEW_TEMPLATE.columns.map((c) => c.key);
const COLUMN = new Map(REVIEW_TEMPLATE.columns.map((c) => [c.key, c]));

/** One invented example row (no real person; the e-mail domain is reserved). */
const EXAMPLE: CanonicalRow = {
  registry_number: 'EB-000123',
  tooth_fdi: '36',
  case_ref: '',
  review_date: '2024-05-28',
  tooth_status: 'present',
  pai: '2',
  lesion_mm: '1.5',
  pain_on_biting: 'no',
  tender_to_percussion: 'no',
  tender_to_palpation: 'no',
  spontaneous_pain: 'no',
  swelling: 'no',
  sinus_tract: 'no',
  mobility: '',
  event_date: '',
  extraction_reason: '',
  other_findings: '',
  assessor_email: 'clinician@lamina-demo.invalid',
};

/** The downloadable review template: the header and one invented example row. */
export function reviewTemplateCsv(): string {
  return writeCsv(REVIEW_COLUMN_KEYS, [REVIEW_COLUMN_KEYS.map((k) => EXAMPLE[k] ?? '')]);
}

/** A canonical row with the file line it starts on. */
export interface CanonicalRecord {
  line: number;
  cells: CanonicalRow;
}

/**
 * Reads a CSV file in the template's form (its headers; ISO dates; codes or their labels) into
 * canonical records. Unknown or repeated headers and missing required ones are errors on line 1.
 */
export function readReviewCsv(text: string): { records: CanonicalRecord[]; errors: CsvError[] } {
  const errors: CsvError[] = [];
  const { header, rows } = readRecords(text, errors);
  if (!header) return { records: [], errors };
  const index = new Map<string, number>();
  header.forEach((raw, i) => {
    const name = raw.trim().toLowerCase();
    if (name === '') {
      if (i !== header.length - 1) errors.push({ line: 1, reason: `Column ${i + 1} of the header has no name.` });
      return;
    }
    if (!COLUMN.has(name)) errors.push({ line: 1, column: raw.trim(), reason: `Unknown column “${raw.trim()}”: the review template’s columns are ${REVIEW_COLUMN_KEYS.join(', ')}.` });
    else if (index.has(name)) errors.push({ line: 1, column: name, reason: `Column “${name}” appears twice.` });
    else index.set(name, i);
  });
  for (const c of REVIEW_TEMPLATE.columns) {
    if (c.required && !index.has(c.key)) errors.push({ line: 1, column: c.key, reason: `The header lacks the column “${c.key}”.` });
  }
  if (!index.has('case_ref') && !(index.has('registry_number') && index.has('tooth_fdi'))) {
    errors.push({ line: 1, column: 'registry_number', reason: 'Name the case of each row: give the columns registry_number and tooth_fdi, or case_ref.' });
  }
  if (errors.length) return { records: [], errors };
  const records: CanonicalRecord[] = [];
  for (const r of rows) {
    if (r.cells.slice(header.length).some((c) => c.trim() !== '')) {
      errors.push({ line: r.line, reason: `The row has ${r.cells.length} cells but the header has ${header.length}: check for an unquoted comma.` });
      continue;
    }
    const cells: CanonicalRow = {};
    for (const [key, i] of index) {
      const v = (r.cells[i] ?? '').trim();
      cells[key] = v.charCodeAt(0) === 39 ? readCsvCell(v).trim() : v;
    }
    records.push({ line: r.line, cells });
  }
  return { records, errors };
}

/** A valid review row, before it is attached to a case. */
export interface ReviewImportRow {
  line: number;
  /** Set with `tooth` unless `caseRef` is given (both may be). */
  registryNumber: string | null;
  tooth: number | null;
  /** Lower-cased case id or its first characters. */
  caseRef: string | null;
  /** Lower-cased. */
  assessorEmail: string;
  review: ReviewImport;
}

const norm = (s: string) => s.trim().toLowerCase().replace(/[\s_-]+/g, ' ');

/** A code cell: the code, its label or a synonym (case, spaces, _ and - forgiven); null when unknown. */
function readCode(column: TemplateColumn, text: string): string | null {
  const t = norm(text);
  for (const c of column.codes ?? []) {
    if (norm(c.code) === t || norm(c.label) === t || (c.synonyms ?? []).some((s) => norm(s) === t)) return c.code;
  }
  return null;
}

/** Schema field → template column, for zod issues. */
const FIELD_COLUMN: Record<string, string> = {
  reviewDate: 'review_date',
  toothStatus: 'tooth_status',
  paiScore: 'pai',
  lesionDiameterMm: 'lesion_mm',
  otherFindings: 'other_findings',
  eventDate: 'event_date',
  extractionReason: 'extraction_reason',
  ...Object.fromEntries(SIGN_COLUMNS.map((s) => [s.sign, s.key])),
};

/**
 * Checks canonical review rows on their own (no database): the case is named, the values read,
 * the findings pass the review schema. What needs the practice's records (the case itself, the
 * assessor, duplicates) is lib/registry/review-import.ts. Errors are in line order.
 */
export function parseReviewRows(records: readonly CanonicalRecord[]): { rows: ReviewImportRow[]; errors: CsvError[] } {
  const errors: CsvError[] = [];
  const rows: ReviewImportRow[] = [];
  for (const record of records) {
    const cell = (key: string) => (record.cells[key] ?? '').trim();
    if (REVIEW_COLUMN_KEYS.every((k) => cell(k) === '')) continue; // a blank row
    const before = errors.length;
    const report = (column: string | undefined, reason: string) => errors.push({ line: record.line, ...(column ? { column } : {}), reason });

    const caseRef = cell('case_ref').toLowerCase() || null;
    if (caseRef && !/^[0-9a-f-]{8,36}$/.test(caseRef)) report('case_ref', `“${cell('case_ref')}” is not a case reference: give the first 8 characters of the case’s id, as Lamina shows it.`);
    const registryNumber = cell('registry_number') || null;
    let tooth: number | null = null;
    if (cell('tooth_fdi')) {
      const t = parseFdi(cell('tooth_fdi'), { allowPrimary: true });
      if (t.ok) tooth = t.tooth.fdi;
      else report('tooth_fdi', `${t.reason.replace(/\.$/, '')} (found “${cell('tooth_fdi')}”).`);
    }
    if (!caseRef) {
      if (!registryNumber) report('registry_number', 'Enter the registry number (with the tooth), or the case reference.');
      if (!cell('tooth_fdi')) report('tooth_fdi', 'Enter the tooth in FDI notation, e.g. 36 (or the case reference).');
    }

    const assessorRaw = cell('assessor_email');
    const assessor = Email.safeParse(assessorRaw);
    if (!assessorRaw) report('assessor_email', 'Enter the e-mail of the clinician who assessed the review.');
    else if (!assessor.success) report('assessor_email', `“${assessorRaw}” is not an e-mail address.`);

    const values: Record<string, unknown> = {};
    const failed = new Set<string>();
    const put = (key: string, field: string, value: unknown) => {
      if (cell(key) !== '') values[field] = value;
    };
    put('review_date', 'reviewDate', cell('review_date'));
    put('event_date', 'eventDate', cell('event_date'));
    put('other_findings', 'otherFindings', cell('other_findings'));
    for (const key of ['review_date', 'event_date']) {
      if (/^\d{1,2}[./-]\d{1,2}[./-]\d{2,4}$/.test(cell(key))) {
        report(key, `“${cell(key)}” looks like a spreadsheet date: write dates as YYYY-MM-DD, or choose the file’s date order when you import it.`);
        failed.add(key);
      }
    }
    for (const [key, field] of [['tooth_status', 'toothStatus'], ['extraction_reason', 'extractionReason']] as const) {
      if (cell(key) === '') continue;
      const code = readCode(COLUMN.get(key)!, cell(key));
      if (code === null) {
        report(key, `“${cell(key)}”: write ${COLUMN.get(key)!.codes!.map((c) => c.code).join(', ')}.`);
        failed.add(key);
      } else values[field] = code;
    }
    for (const s of SIGN_COLUMNS) {
      if (cell(s.key) === '') continue;
      const code = readCode(COLUMN.get(s.key)!, cell(s.key));
      if (code === null) {
        report(s.key, `“${cell(s.key)}”: write yes or no (blank when not recorded).`);
        failed.add(s.key);
      } else values[s.sign] = code === 'yes';
    }
    for (const [key, field] of [['pai', 'paiScore'], ['lesion_mm', 'lesionDiameterMm']] as const) {
      const text = cell(key);
      if (text === '') continue;
      const t = text.replace(/^(-?\d+),(\d+)$/, '$1.$2');
      if (key === 'pai' && /^-?(\d+\.?\d*|\.\d+)$/.test(t) && !/^[1-5]$/.test(t)) {
        // out of the scale: said once, on its own column (the schema would add a PAI–lesion mismatch)
        report(key, `The periapical index is a whole number from 1 to 5 (found “${text}”).`);
        failed.add(key);
      } else if (/^-?(\d+\.?\d*|\.\d+)$/.test(t)) values[field] = Number(t);
      else {
        report(key, /^-?\d+([.,]\d+)?\s*[a-zµ]+$/i.test(text) ? `“${text}”: write the number without the unit.` : `“${text}” is not a number.`);
        failed.add(key);
      }
    }
    if (values.toothStatus === undefined && !failed.has('tooth_status')) report('tooth_status', 'Enter the tooth status: present, extracted, retreated or surgery.');
    if (cell('tooth_status') === '') failed.add('tooth_status'); // a blank status is reported just above
    const parsed = ReviewImportSchema.safeParse(values);
    if (!parsed.success) {
      for (const e of columnIssues(parsed.error, columnOfPath, failed, cell)) report(e.column, e.reason);
    }
    if (errors.length === before && parsed.success && assessor.success) {
      rows.push({ line: record.line, registryNumber, tooth, caseRef, assessorEmail: assessor.data, review: parsed.data });
    }
  }
  errors.sort((a, b) => a.line - b.line);
  return { rows, errors };
}

/** The template column of a schema field (the first step of an issue's path). */
function columnOfPath(path: PropertyKey[]): string | undefined {
  return path[0] === undefined ? undefined : FIELD_COLUMN[String(path[0])];
}
