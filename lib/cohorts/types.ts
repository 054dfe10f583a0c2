/**
 * The research export's contract between the app (which reads a saved cohort version's rows from
 * the database, on the queue) and the pure archive writer (lib/cohorts: de-identification,
 * k-anonymity, the files of the zip). The writer never sees a name, e-mail, phone, note or
 * registry number: the reader leaves them out before a row reaches it.
 */
import type { Writable } from 'node:stream';
import type { OutcomeCase } from '@/lib/outcomes/cases';
import type { CalendarDate } from '@/lib/registry/calendar-date';

/** The patient facts the export may use, each only after de-identification (bands, prefixes). */
export interface CohortPatientFacts {
  dateOfBirth: CalendarDate;
  sex: string;
  postalCode: string | null;
}

/** One case of a cohort: the outcome engine's row plus its patient's facts and practice. */
export interface CohortRow {
  case: OutcomeCase;
  patient: CohortPatientFacts;
  practiceId: string;
}

export interface CohortExportProgress {
  /** Rows handled so far over both passes (the k-anonymity count, then the writing). */
  done: number;
  total: number;
}

export interface CohortArchiveInput {
  /** Called once per pass (the writer makes two: quasi-identifier counts, then the files); the same rows in the same order each time. */
  rows: () => AsyncIterable<CohortRow>;
  /** How many rows `rows()` yields (for progress). */
  total: number;
  /** Variable keys chosen in the cohort version (the writer's catalogue names them). */
  variables: readonly string[];
  /** The smallest class size on the quasi-identifiers (default 5). */
  k: number;
  /** The per-export HMAC secret for pseudonymous ids; never written into the archive or stored. */
  secret: Buffer;
  /** The practice's minimum observation time for the outcome rules (lib/scoring). */
  minObservationDays: number;
  /** The day the export is made (follow-up is cut there). */
  today: CalendarDate;
  /** Named in the README: the cohort, its version, and its filters in words. */
  cohort: { name: string; version: number; filtersText: string };
  onProgress?: (p: CohortExportProgress) => void | Promise<void>;
  /** Aborts the export between rows (cancellation). */
  signal?: AbortSignal;
}

/** What the export did, kept on the export's audit event and shown in the README. */
export interface CohortExportSummary {
  cases: number;
  patients: number;
  reviews: number;
  /** Rows whose quasi-identifiers were generalised, and rows suppressed, to reach k. */
  generalised: number;
  suppressed: number;
  k: number;
  /** The smallest l (distinct outcomes) in any equivalence class (reported, not enforced). */
  minL: number;
  files: string[];
}

/** Writes the zip to `out` (streamed: memory stays flat with the number of rows). */
export type WriteCohortArchive = (input: CohortArchiveInput, out: Writable) => Promise<CohortExportSummary>;
