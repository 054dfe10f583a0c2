/**
 * An invented practice history for the review import's tests and bench (issue 16): N past
 * completed cases as a case-import CSV, and their follow-up reviews as a review-import CSV, with
 * the rows themselves so a test can compute what Lamina should make of them. Seeded
 * (createRandom): the same world on every run for the same seed and today.
 *
 * Cases: completed 26–60 months before today (the old ones: every default visit's due date has
 * passed) or, one in ten, 10–14 months before (the young ones: the 12-month visit may still be
 * ahead or in its window). Reviews, per case (default policy windows: 6 months −30/+60 days,
 * 12 months −60/+120, 24 months −90/+180):
 * - old: at ~6 or ~12 months, then at ~24 months (in its window) or at ~500 days (between the
 *   windows: an unplanned review); a third one at ~12 months when the case has three;
 * - young: at ~6 months and at ~250 days (between the 6- and 12-month windows).
 * The last review of an old case finds the tooth extracted (one in twelve, with a reason) or
 * retreated (one in fourteen, 30 days before, as the event date); other reviews find it present
 * with a PAI and lesion, and sometimes signs.
 */
import ExcelJS from 'exceljs';
import Papa from 'papaparse';
import { writeCsv } from '@/lib/csv/write';
import { addDaysTo, addMonthsClamped, type CalendarDate } from '@/lib/registry/calendar-date';
import { templateCsv } from '@/lib/registry/csv';
import { REVIEW_COLUMN_KEYS, SIGN_COLUMNS } from '@/lib/registry/review-csv';
import type { RecordedReview } from '@/lib/scoring';
import type { ReviewSign } from '@/lib/schemas/review';
import { createRandom } from './random';

export interface HistoryReview extends RecordedReview {
  line: number;
  lesionMm: number | null;
  extractionReason: string | null;
}

export interface HistoryCase {
  registryNumber: string;
  tooth: number;
  operatorEmail: string;
  completionDate: CalendarDate;
  baselinePai: number;
  lesionMm: number;
  reviews: HistoryReview[];
}

export interface HistoryWorld {
  cases: HistoryCase[];
  caseCsv: string;
  reviewCsv: string;
  /** The review rows as cells by template column, in file order (line 2 first). */
  reviewCells: Record<string, string>[];
}

export interface HistoryOptions {
  seed: number;
  cases: number;
  today: CalendarDate;
  /** E-mails of the practice's clinicians (operators and assessors). */
  clinicians: readonly string[];
  /** Cases with a third review, one in `thirdEvery` (0: none). */
  thirdEvery?: number;
}

const TEMPLATE = Papa.parse<string[]>(templateCsv().trim()).data;
const CASE_HEADER = TEMPLATE[0]!;
const CASE_EXAMPLE: Record<string, string> = Object.fromEntries(CASE_HEADER.map((h, i) => [h, TEMPLATE[1]![i]!]));
const TEETH = [36, 46, 37, 47];
const PATIENT_COLUMNS = new Set(['given_name', 'family_name', 'date_of_birth', 'sex', 'email', 'phone', 'postal_code', 'recall_contact', 'recall_channel', 'research_use', 'consent_date']);

export function historyWorld(o: HistoryOptions): HistoryWorld {
  const r = createRandom(o.seed);
  const cases: HistoryCase[] = [];
  const caseRows: string[][] = [];
  const reviewCells: Record<string, string>[] = [];
  const lesionFor = (pai: number) => (pai === 1 ? 0 : pai <= 3 ? r.pick([0, 0.5, 1, 1.5, 2]) : r.pick([2, 3, 4.5, 6, 8]));
  const sign = (): boolean | undefined => (r.chance(0.5) ? undefined : r.chance(0.12));
  for (let i = 0; i < o.cases; i++) {
    const young = i % 10 === 9;
    // one patient in ten has a second tooth treated
    const patient = i % 10 === 5 && i > 0 ? i - 1 : i;
    const registryNumber = `HX-${String(patient + 1).padStart(6, '0')}`;
    const tooth = patient === i ? TEETH[i % TEETH.length]! : TEETH[(i + 1) % TEETH.length]!;
    const monthsBack = young ? r.int(10, 14) : r.int(26, 60);
    const completionDate = addDaysTo(addMonthsClamped(o.today, -monthsBack), -r.int(0, 20));
    const baselinePai = r.pick([1, 2, 3, 4, 4, 5]);
    const lesionMm = lesionFor(baselinePai);
    const operatorEmail = o.clinicians[i % o.clinicians.length]!;
    caseRows.push(
      CASE_HEADER.map((h) =>
        patient !== i && PATIENT_COLUMNS.has(h)
          ? '' // the patient's details are on their first row
          : h === 'registry_number'
          ? registryNumber
          : h === 'family_name'
            ? `Hx${patient}`
            : h === 'operator_email'
              ? operatorEmail
              : h === 'tooth_fdi'
                ? String(tooth)
                : h === 'start_date' || h === 'consent_date'
                  ? addDaysTo(completionDate, -14)
                  : h === 'completion_date'
                    ? completionDate
                    : h === 'definitive_restoration_date'
                      ? addDaysTo(completionDate, 30)
                      : h === 'pai'
                        ? String(baselinePai)
                        : h === 'lesion_mm'
                          ? String(lesionMm)
                          : h.startsWith('referrer_')
                            ? ''
                            : (CASE_EXAMPLE[h] ?? ''),
      ),
    );
    const days = young
      ? [r.int(175, 195), r.int(245, 290)]
      : [r.chance(0.5) ? r.int(175, 200) : r.int(340, 390), r.chance(0.7) ? r.int(700, 760) : r.int(490, 620)];
    if (!young && o.thirdEvery && i % o.thirdEvery === 0) days.splice(1, 0, days[0]! < 300 ? r.int(340, 390) : r.int(400, 440));
    const reviews: HistoryReview[] = [];
    days.forEach((d, k) => {
      const reviewDate = addDaysTo(completionDate, d);
      const last = k === days.length - 1 && !young;
      const event = last ? (r.chance(1 / 12) ? 'extracted' : r.chance(1 / 14) ? 'retreated' : null) : null;
      const pai = r.pick([1, 1, 1, 2, 2, 3, 4, 5]);
      const signs: Partial<Record<ReviewSign, boolean>> = {};
      if (!event || event === 'retreated') {
        for (const s of SIGN_COLUMNS) {
          const v = sign();
          if (v !== undefined) signs[s.sign] = v;
        }
      }
      const review: HistoryReview = {
        line: 0,
        reviewDate,
        toothStatus: event ?? 'present',
        paiScore: event === 'extracted' ? null : pai,
        lesionMm: event === 'extracted' ? null : lesionFor(pai),
        signs: event === 'extracted' ? {} : signs,
        eventDate: event === 'retreated' ? addDaysTo(reviewDate, -30) : null,
        extractionReason: event === 'extracted' ? r.pick(['endodontic', 'fracture', 'periodontal', 'other']) : null,
      };
      reviews.push(review);
    });
    cases.push({ registryNumber, tooth, operatorEmail, completionDate, baselinePai, lesionMm, reviews });
  }
  // Reviews in file order: by date (as a practice's export often is), so a case's rows are apart.
  const all = cases.flatMap((c) => c.reviews.map((rv) => ({ c, rv }))).sort((a, b) => (a.rv.reviewDate < b.rv.reviewDate ? -1 : a.rv.reviewDate > b.rv.reviewDate ? 1 : 0));
  all.forEach(({ c, rv }, n) => {
    rv.line = n + 2;
    const cells: Record<string, string> = Object.fromEntries(REVIEW_COLUMN_KEYS.map((k) => [k, '']));
    cells.registry_number = c.registryNumber;
    cells.tooth_fdi = String(c.tooth);
    cells.review_date = rv.reviewDate;
    cells.tooth_status = rv.toothStatus;
    cells.pai = rv.paiScore === null || rv.paiScore === undefined ? '' : String(rv.paiScore);
    cells.lesion_mm = rv.lesionMm === null ? '' : String(rv.lesionMm);
    for (const s of SIGN_COLUMNS) {
      const v = rv.signs?.[s.sign];
      cells[s.key] = v === undefined ? '' : v ? 'yes' : 'no';
    }
    cells.event_date = rv.eventDate ?? '';
    cells.extraction_reason = rv.extractionReason ?? '';
    cells.assessor_email = c.operatorEmail;
    reviewCells.push(cells);
  });
  return {
    cases,
    caseCsv: writeCsv(CASE_HEADER, caseRows),
    reviewCsv: writeCsv(REVIEW_COLUMN_KEYS, reviewCells.map((c) => REVIEW_COLUMN_KEYS.map((k) => c[k]!))),
    reviewCells,
  };
}

/**
 * The reviews as a practice's own workbook, the way a practice keeps them: its own headers in its
 * own order (and a column Lamina does not take), DD/MM/YYYY dates as text, decimal commas, Y/N
 * signs, its own status words, upper-case e-mails, teeth and PAI as numbers. `options` are the
 * mapping step's choices for it (lib/services/import-file.ts).
 */
export async function historyWorkbook(cells: readonly Record<string, string>[]): Promise<{
  bytes: Uint8Array;
  options: { columns: (string | null)[]; dateOrder: 'dmy'; decimalMark: ','; codes: Record<string, Record<string, string>> };
}> {
  const dmy = (v: string) => (v ? v.split('-').reverse().join('/') : '');
  const own: [string, string | null, (v: string) => string | number][] = [
    ['Seen on', 'review_date', dmy],
    ['Pt No.', 'registry_number', (v) => v],
    ['Tooth', 'tooth_fdi', (v) => Number(v)],
    ['Clinician', 'assessor_email', (v) => v.toUpperCase()],
    ['Tooth state', 'tooth_status', (v) => ({ present: 'In situ', extracted: 'Extr.', retreated: 'Re-RCT', surgery: 'Apicectomy' })[v] ?? v],
    ['PAI', 'pai', (v) => (v === '' ? '' : Number(v))],
    ['Lesion mm', 'lesion_mm', (v) => v.replace('.', ',')],
    ['Notes (internal)', null, () => 'not imported'],
    ...SIGN_COLUMNS.map((s): [string, string, (v: string) => string] => [s.key.replace(/_/g, ' ').toUpperCase(), s.key, (v) => (v === 'yes' ? 'Y' : v === 'no' ? 'N' : '')]),
    ['Event on', 'event_date', dmy],
    ['Why extracted', 'extraction_reason', (v) => v],
  ];
  const wb = new ExcelJS.Workbook();
  const ws = wb.addWorksheet('Recalls');
  ws.addRow(own.map(([h]) => h));
  for (const c of cells) ws.addRow(own.map(([, key, f]) => f(key ? (c[key] ?? '') : '')));
  return {
    bytes: new Uint8Array(await wb.xlsx.writeBuffer()),
    options: {
      columns: own.map(([, key]) => key),
      dateOrder: 'dmy',
      decimalMark: ',',
      codes: { tooth_status: { 'In situ': 'present', 'Extr.': 'extracted', 'Re-RCT': 'retreated' } },
    },
  };
}
