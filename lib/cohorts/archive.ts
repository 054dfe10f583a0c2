/**
 * The research export's archive (issue 14): `writeCohortArchive` (the contract of
 * lib/cohorts/types.ts) reads the cohort's rows twice and writes a zip (archiver) to `out`:
 *
 *   cases.csv        one row per case released (RFC 4180, CRLF, the catalogue's columns)
 *   reviews.csv      one row per review of a released case, up to the export's day (long format)
 *   dictionary.csv   the data dictionary (variable, label, type, unit, codes, derivation)
 *   dictionary.json  the same, as JSON
 *   README.md        the cohort, outcome and censoring definitions with sources, the
 *                    de-identification applied and its figures (lib/cohorts/readme.ts)
 *   analysis.R       loads the files; survfit and coxph with cluster(patient_id)
 *   analysis.py      loads the files with pandas; Kaplan–Meier by hand
 *
 * Pass 1 counts the quasi-identifier classes (lib/cohorts/k-anonymity.ts) and collects the
 * clinicians, referrers and practices to code; pass 2 de-identifies and writes. Memory stays flat
 * with the number of rows: cases.csv streams into the zip as it is written, reviews.csv goes to a
 * temporary file (removed at the end) that is added after it, and what is kept between rows is
 * bounded by the classes and codes (plus one number per patient, to count them). Honours
 * `signal` between rows; `onProgress` is called every PROGRESS_EVERY rows and at the end of each pass.
 */
import { once } from 'node:events';
import { createWriteStream, mkdtempSync, rmSync, type WriteStream } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { PassThrough, type Writable } from 'node:stream';
import { finished } from 'node:stream/promises';
import archiver from 'archiver';
import { csvCell, type CsvValue } from '@/lib/csv/write';
import { FACTORS } from '@/lib/outcomes/compute';
import { healingObservation, outcomeAfterAYear, outcomeOf, type OutcomeCase } from '@/lib/outcomes/cases';
import { daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import { caseObservations, recordedHistory } from '@/lib/scoring';
import { codesCell, dictionaryRows, exportColumns, type CohortVariable, type ExportRow } from './catalogue';
import { ageAtCompletion, ageBand, codeBook, hmacHex, postalPrefix, pseudonym, yearPeriod } from './deidentify';
import { classKey, KAnonymityCounter } from './k-anonymity';
import { cohortReadme } from './readme';
import { ANALYSIS_PY, ANALYSIS_R } from './scripts';
import type { CohortExportSummary, CohortRow, WriteCohortArchive } from './types';

export const PROGRESS_EVERY = 1000;
export const COHORT_FILES = ['cases.csv', 'reviews.csv', 'dictionary.csv', 'dictionary.json', 'README.md', 'analysis.R', 'analysis.py'] as const;
export const REVIEW_COLUMNS = ['case_id', 'days', 'pai', 'outcome'] as const;
const CRLF = '\r\n';

/** The quasi-identifiers an export can release, in the order of the class key. */
const QI_KEYS = ['practice', 'completion_year', 'age_band', 'sex', 'tooth_group', 'postal_prefix'] as const;
type QiKey = (typeof QI_KEYS)[number];

/** The case with only the reviews up to the export's day (follow-up is cut there). */
export function cutAt(c: OutcomeCase, today: CalendarDate): OutcomeCase {
  return c.reviews.every((r) => r.reviewDate <= today) ? c : { ...c, reviews: c.reviews.filter((r) => r.reviewDate <= today) };
}

interface Quasi {
  fine: string;
  generalised: string;
  year: number;
  age: number;
  postal: string | null;
}

function quasi(row: CohortRow, c: OutcomeCase, released: ReadonlySet<QiKey>): Quasi {
  const year = Number(c.completionDate.slice(0, 4));
  const age = ageAtCompletion(row.patient.dateOfBirth, c.completionDate);
  const postal = postalPrefix(row.patient.postalCode);
  const value = (q: QiKey, generalised: boolean): string | null => {
    if (!released.has(q)) return null;
    switch (q) {
      case 'practice':
        return row.practiceId;
      case 'completion_year':
        return generalised ? yearPeriod(year) : String(year);
      case 'age_band':
        return ageBand(age, generalised ? 10 : 5);
      case 'sex':
        return row.patient.sex;
      case 'tooth_group':
        return FACTORS.group.code(c);
      case 'postal_prefix':
        return generalised ? null : postal;
    }
  };
  return {
    fine: classKey(QI_KEYS.map((q) => value(q, false))),
    generalised: classKey(QI_KEYS.map((q) => value(q, true))),
    year,
    age,
    postal,
  };
}

/** The sensitive attribute of l-diversity: the outcome at the latest review a year or more after completion ('not_known' when none). */
const sensitiveOutcome = (c: OutcomeCase, minObs: number) => outcomeAfterAYear(c, minObs) ?? 'not_known';

function abortError(signal: AbortSignal): Error {
  const reason: unknown = signal.reason;
  if (reason instanceof Error) return reason;
  const e = new Error('The export was cancelled');
  e.name = 'AbortError';
  return e;
}

/** Writes to a stream, waiting while it is full (backpressure); fails if the stream fails. */
async function write(stream: Writable, text: string): Promise<void> {
  if (!stream.write(text)) await once(stream, 'drain');
}

const line = (cells: readonly CsvValue[]) => cells.map(csvCell).join(',') + CRLF;

export const writeCohortArchive: WriteCohortArchive = async (input, out) => {
  const { k, secret, minObservationDays: minObs, today, signal } = input;
  if (secret.length < 16) throw new RangeError('The export secret must be at least 16 bytes');
  const columns = exportColumns(input.variables);
  const released = new Set(QI_KEYS.filter((q) => columns.some((v) => v.key === q)));
  const total = input.total * 2;
  let done = 0;
  const progress = async (force = false) => {
    if (input.onProgress && (force || done % PROGRESS_EVERY === 0)) await input.onProgress({ done, total });
  };
  const checkAbort = () => {
    if (signal?.aborted) throw abortError(signal);
  };

  // Pass 1: the classes, and what is to be coded.
  checkAbort();
  const counter = new KAnonymityCounter(k);
  const clinicians = new Set<string>();
  const referrers = new Set<string>();
  const practices = new Set<string>();
  for await (const row of input.rows()) {
    checkAbort();
    const c = cutAt(row.case, today);
    const q = quasi(row, c, released);
    counter.add(q.fine, q.generalised, sensitiveOutcome(c, minObs));
    clinicians.add(c.operatorId);
    if (c.referrerId) referrers.add(c.referrerId);
    practices.add(row.practiceId);
    done += 1;
    await progress();
  }
  await progress(true);
  const plan = counter.plan();
  const clinicianCodes = codeBook(secret, 'clinician', 'C', clinicians);
  const referrerCodes = codeBook(secret, 'referrer', 'R', referrers);
  const practiceCodes = codeBook(secret, 'practice', 'P', practices);

  // Pass 2: the files.
  const tmp = mkdtempSync(path.join(tmpdir(), 'lamina-cohort-'));
  const reviewsPath = path.join(tmp, 'reviews.csv');
  const archive = archiver('zip', { zlib: { level: 6 } });
  const cases = new PassThrough();
  let reviewsFile: WriteStream | null = null;
  let failure: Error | null = null;
  const fail = (e: unknown) => {
    failure ??= e instanceof Error ? e : new Error(String(e));
  };
  archive.on('error', fail);
  archive.on('warning', fail);
  out.on('error', fail);
  const outDone = finished(out).catch(fail);
  archive.pipe(out);
  try {
    archive.append(cases, { name: 'cases.csv' });
    reviewsFile = createWriteStream(reviewsPath);
    reviewsFile.on('error', fail);
    await write(cases, line(columns.map((v) => v.key)));
    await write(reviewsFile, line(REVIEW_COLUMNS));
    const patients = new Set<number>();
    let released_ = 0;
    let reviews = 0;
    for await (const row of input.rows()) {
      checkAbort();
      if (failure) throw failure;
      done += 1;
      const c = cutAt(row.case, today);
      const q = quasi(row, c, released);
      const decision = plan.decide(q.fine);
      if (decision !== 'suppress') {
        const r = exportRow(row, c, q, decision === 'generalise', { secret, minObs, clinicianCodes, referrerCodes, practiceCodes });
        patients.add(parseInt(hmacHex(secret, `patient:${row.case.patientId}`).slice(0, 13), 16));
        released_ += 1;
        await write(cases, line(columns.map((v) => v.value(r))));
        for (const rv of c.reviews) {
          await write(reviewsFile, line([r.caseId, daysBetween(c.completionDate, rv.reviewDate), rv.paiScore ?? null, outcomeOf(c, rv, minObs)]));
          reviews += 1;
        }
      }
      await progress();
    }
    await progress(true);
    cases.end();
    reviewsFile.end();
    await finished(reviewsFile);
    checkAbort();
    if (failure) throw failure;
    archive.file(reviewsPath, { name: 'reviews.csv' });
    const summary: CohortExportSummary = {
      cases: released_,
      patients: patients.size,
      reviews,
      generalised: plan.generalised,
      suppressed: plan.suppressed,
      k,
      minL: plan.minL,
      files: [...COHORT_FILES],
    };
    const codes = {
      clinician: Object.fromEntries([...clinicianCodes.values()].sort().map((c) => [c, 'a clinician of the cohort'])),
      referrer: { ...Object.fromEntries([...referrerCodes.values()].sort().map((c) => [c, 'a referring dentist of the cohort'])), none: 'No referrer recorded' },
      practice: Object.fromEntries([...practiceCodes.values()].sort().map((c) => [c, 'a practice of the cohort'])),
    };
    const dict = dictionaryRows(columns, codes);
    archive.append(
      [line(['variable', 'label', 'type', 'unit', 'codes', 'derivation']), ...dict.map((d) => line([d.variable, d.label, d.type, d.unit, codesCell(d.codes), d.derivation]))].join(''),
      { name: 'dictionary.csv' },
    );
    archive.append(JSON.stringify({ cohort: input.cohort, variables: dict, reviews: REVIEW_DICTIONARY }, null, 2) + '\n', { name: 'dictionary.json' });
    archive.append(cohortReadme({ input, summary, plan, columns, released: [...released] }), { name: 'README.md' });
    archive.append(ANALYSIS_R, { name: 'analysis.R' });
    archive.append(ANALYSIS_PY, { name: 'analysis.py' });
    await archive.finalize();
    await outDone;
    if (failure) throw failure;
    return summary;
  } catch (e) {
    archive.abort();
    cases.destroy();
    reviewsFile?.destroy();
    throw e;
  } finally {
    rmSync(tmp, { recursive: true, force: true });
  }
};

/** The long file's columns, for dictionary.json. */
export const REVIEW_DICTIONARY = [
  { variable: 'case_id', label: 'Case (pseudonymous)', type: 'identifier', unit: null, derivation: 'The case_id of cases.csv.' },
  { variable: 'days', label: 'Day of the review', type: 'integer', unit: 'days since completion', derivation: 'Days from the completion date to the review date; reviews after the export’s day are left out.' },
  { variable: 'pai', label: 'PAI at the review', type: 'integer', unit: 'PAI score (1–5)', derivation: 'The periapical index scored at the review (Ørstavik 1986); empty when none (e.g. the tooth was extracted).' },
  {
    variable: 'outcome',
    label: 'Outcome of the review',
    type: 'categorical',
    unit: null,
    derivation: 'lib/scoring assessRecordedReview with the practice’s minimum observation time: healed, healing, uncertain, disease, or a terminal event (tooth-extracted, retreated, apical-surgery).',
  },
] as const;

interface Coding {
  secret: Buffer;
  minObs: number;
  clinicianCodes: Map<string, string>;
  referrerCodes: Map<string, string>;
  practiceCodes: Map<string, string>;
}

function exportRow(row: CohortRow, c: OutcomeCase, q: Quasi, generalised: boolean, k: Coding): ExportRow {
  return {
    caseId: pseudonym(k.secret, 'case', c.id),
    patientId: pseudonym(k.secret, 'patient', c.patientId),
    previousCaseId: c.previousCaseId ? pseudonym(k.secret, 'case', c.previousCaseId) : null,
    practice: k.practiceCodes.get(row.practiceId)!,
    clinician: k.clinicianCodes.get(c.operatorId)!,
    referrer: c.referrerId ? k.referrerCodes.get(c.referrerId)! : 'none',
    completionYear: generalised ? yearPeriod(q.year) : String(q.year),
    ageBand: ageBand(q.age, generalised ? 10 : 5),
    sex: row.patient.sex,
    postalPrefix: generalised ? null : q.postal,
    generalised,
    case: c,
    healing: healingObservation(c, k.minObs),
    toothLoss: caseObservations(recordedHistory({ completionDate: c.completionDate, baselinePai: c.baselinePai }, c.reviews), { minObservationDays: k.minObs }).toothLoss,
    minObservationDays: k.minObs,
  };
}

export type { CohortVariable };
