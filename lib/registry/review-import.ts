/**
 * The rules of the review import (issue 16) that need the practice's records, as pure code: the
 * service reads the cases, their current reviews and their visits, and this decides.
 *
 * Per row, in file order:
 * - The case: by `case_ref` (a case id or its first 8+ characters, unique in the practice), or by
 *   registry number and tooth — the case on that tooth in follow-up on the review date, i.e. the
 *   latest one completed on or before it (a tooth's primary treatment, then its retreatment).
 *   No such patient, no completed case on the tooth, two cases completed the same day, a
 *   reference that names another patient or tooth: a problem on the row's column.
 * - The review date lies between the case's completion and today; the case is not archived.
 * - The assessor is a clinician of the practice (by e-mail).
 * - The same case and date already recorded: reported as a duplicate and skipped, never doubled
 *   (so the same file imported twice adds nothing). Twice in the file: a problem on the later line.
 * - An event date lies on or after completion, and no other review of the case (recorded or in
 *   the file) falls between it and the review date (that review saw the tooth as it was then).
 * - The outcome is computed (lib/scoring assessRecordedReview, the practice's minimum observation
 *   time); the file has no outcome column.
 *
 * Then per case, with the accepted rows in date order (lib/recall transitionVisit, the one rule):
 * - a review inside a visit's window marks that visit attended (open or missed visits; the nearest
 *   due date when windows overlap) and is recorded at it;
 * - a review finding the tooth extracted, retreated or operated cancels the visits not yet
 *   attended whose window begins after it (they are no longer needed);
 * - open visits whose window has ended by today become missed (`window_ended`, as the scan does);
 * - open visits already due (due date before today, window still open) with no review get no
 *   automatic reminder (`quiet`) unless the coordinator asks (`remindOverdue`): the practice had
 *   its own follow-up then. Later visits continue the plan as usual.
 */
import { daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import { isOpenStatus, transitionVisit, type MissedReasonValue, type VisitStatus, type VisitStatusChanges } from '@/lib/recall/status';
import { assessRecordedReview, TERMINAL_EVENT_OF_STATUS, type ReviewAssessment } from '@/lib/scoring';
import { REVIEW_SIGNS, type ReviewImport, type ReviewSign } from '@/lib/schemas/review';
import type { CsvError } from './csv';
import type { ReviewImportRow } from './review-csv';

export interface ImportVisitInfo {
  id: string;
  milestone: number;
  dueDate: CalendarDate;
  windowStart: CalendarDate;
  windowEnd: CalendarDate;
  status: VisitStatus;
  bookedDate: CalendarDate | null;
  missedReason: MissedReasonValue | null;
  missedOn: CalendarDate | null;
  missedFrom: VisitStatus | null;
}

export interface ImportCaseInfo {
  id: string;
  registryNumber: string;
  tooth: number;
  /** Null while in progress (such a case takes no review). */
  completionDate: CalendarDate | null;
  baselinePai: number;
  archived: boolean;
  /** Current (not superseded) reviews: their dates and event dates. */
  reviews: { reviewDate: CalendarDate; eventDate: CalendarDate | null }[];
  visits: ImportVisitInfo[];
}

export interface AttachOptions {
  today: CalendarDate;
  minObservationDays: number;
  /** Clinicians of the practice: lower-cased e-mail → user id. */
  assessors: ReadonlyMap<string, string>;
  /** Let the scan remind visits already due at import (default: no). */
  remindOverdue?: boolean;
}

export interface AcceptedReview {
  line: number;
  caseId: string;
  assessorId: string;
  review: ReviewImport;
  signs: Partial<Record<ReviewSign, boolean>>;
  assessment: ReviewAssessment;
  /** The visit it was recorded at (attended by it), or null (an unplanned review). */
  visitId: string | null;
}

export interface VisitChange {
  visitId: string;
  caseId: string;
  from: VisitStatus;
  changes: VisitStatusChanges;
  note: string;
}

export interface AttachResult {
  accepted: AcceptedReview[];
  errors: CsvError[];
  /** Rows whose case already has a review on that date: skipped. */
  duplicates: { line: number; caseId: string; reviewDate: CalendarDate }[];
  visitChanges: VisitChange[];
  /** Open visits already due that get no automatic reminder. */
  quietVisits: string[];
}

export function attachReviews(rows: readonly ReviewImportRow[], cases: readonly ImportCaseInfo[], options: AttachOptions): AttachResult {
  const { today } = options;
  const errors: CsvError[] = [];
  const duplicates: AttachResult['duplicates'] = [];
  const byId = new Map(cases.map((c) => [c.id, c]));
  const byPatient = new Map<string, ImportCaseInfo[]>();
  for (const c of cases) {
    const list = byPatient.get(c.registryNumber);
    if (list) list.push(c);
    else byPatient.set(c.registryNumber, [c]);
  }
  const inFile = new Map<string, number>(); // case|date → line
  const drafts: { row: ReviewImportRow; c: ImportCaseInfo; assessorId: string }[] = [];

  for (const row of rows) {
    const report = (column: string | undefined, reason: string) => errors.push({ line: row.line, ...(column ? { column } : {}), reason });
    const before = errors.length;
    const date = row.review.reviewDate;
    const c = findCase(row, report);
    const assessorId = options.assessors.get(row.assessorEmail);
    if (!assessorId) report('assessor_email', `${row.assessorEmail} is not a clinician of this practice.`);
    if (date > today) report('review_date', `The review date ${date} is in the future.`);
    if (!c) continue;
    if (c.archived) report(undefined, 'The case is archived: restore it before importing its reviews.');
    if (!c.completionDate) {
      report(undefined, 'The case is not completed yet: a review follows the completion of treatment.');
      continue;
    }
    if (date < c.completionDate) report('review_date', `The review date ${date} is before the case’s completion date (${c.completionDate}).`);
    const key = `${c.id}|${date}`;
    if (c.reviews.some((r) => r.reviewDate === date)) {
      if (errors.length === before) duplicates.push({ line: row.line, caseId: c.id, reviewDate: date });
      continue;
    }
    const first = inFile.get(key);
    if (first !== undefined) report('review_date', `The same case has a review on ${date} on line ${first} already.`);
    else inFile.set(key, row.line);
    if (errors.length === before) drafts.push({ row, c, assessorId: assessorId! });
  }

  // Event dates against the case's other reviews (recorded and in the file).
  const fileDates = new Map<string, CalendarDate[]>();
  for (const d of drafts) {
    const list = fileDates.get(d.c.id);
    if (list) list.push(d.row.review.reviewDate);
    else fileDates.set(d.c.id, [d.row.review.reviewDate]);
  }
  const good = drafts.filter((d) => {
    const e = d.row.review.eventDate;
    if (e === undefined) return true;
    const done = d.c.completionDate!;
    const report = (reason: string) => errors.push({ line: d.row.line, column: 'event_date', reason });
    if (e < done) {
      report(`The event date ${e} is before the case’s completion date (${done}).`);
      return false;
    }
    const date = d.row.review.reviewDate;
    const between = [...d.c.reviews.map((r) => r.reviewDate), ...(fileDates.get(d.c.id) ?? [])].filter((x) => x > e && x < date).sort();
    if (between.length) {
      report(`The review of ${between[0]} comes after this date and found no such event: check the date.`);
      return false;
    }
    return true;
  });
  errors.sort((a, b) => a.line - b.line);

  const accepted: AcceptedReview[] = good.map(({ row, c, assessorId }) => {
    const signs: Partial<Record<ReviewSign, boolean>> = {};
    for (const s of REVIEW_SIGNS) if (row.review[s] !== undefined) signs[s] = row.review[s];
    const assessment = assessRecordedReview(
      { completionDate: c.completionDate!, baselinePai: c.baselinePai },
      { reviewDate: row.review.reviewDate, toothStatus: row.review.toothStatus, paiScore: row.review.paiScore ?? null, signs },
      options.minObservationDays,
    );
    return { line: row.line, caseId: c.id, assessorId, review: row.review, signs, assessment, visitId: null };
  });

  // Visits, case by case.
  const visitChanges: VisitChange[] = [];
  const quietVisits: string[] = [];
  const byCase = new Map<string, AcceptedReview[]>();
  for (const a of accepted) {
    const list = byCase.get(a.caseId);
    if (list) list.push(a);
    else byCase.set(a.caseId, [a]);
  }
  for (const [caseId, reviews] of byCase) {
    const c = byId.get(caseId)!;
    const visits = c.visits.map((v) => ({ ...v }));
    const move = (v: ImportVisitInfo, to: VisitStatus, on: CalendarDate, note: string, by: 'user' | 'system', missedReason?: MissedReasonValue) => {
      const r = transitionVisit(v, { to, on, by, ...(missedReason ? { missedReason } : {}) });
      if (!r.ok) return false;
      visitChanges.push({ visitId: v.id, caseId, from: v.status, changes: r.changes, note });
      Object.assign(v, r.changes);
      return true;
    };
    reviews.sort((a, b) => (a.review.reviewDate < b.review.reviewDate ? -1 : 1));
    for (const a of reviews) {
      const date = a.review.reviewDate;
      const candidates = visits
        .filter((v) => (isOpenStatus(v.status) || v.status === 'missed') && v.windowStart <= date && date <= v.windowEnd)
        .sort((x, y) => Math.abs(daysBetween(x.dueDate, date)) - Math.abs(daysBetween(y.dueDate, date)) || x.milestone - y.milestone);
      for (const v of candidates) {
        if (move(v, 'attended', date, `Attended: review of ${date} imported.`, 'user')) {
          a.visitId = v.id;
          break;
        }
      }
    }
    const terminal = reviews.find((a) => TERMINAL_EVENT_OF_STATUS[a.review.toothStatus]);
    if (terminal) {
      const on = terminal.review.reviewDate;
      for (const v of visits) {
        if ((isOpenStatus(v.status) || v.status === 'missed') && v.windowStart > on) {
          move(v, 'cancelled', today, `Cancelled: the tooth was found ${terminal.review.toothStatus === 'surgery' ? 'operated (apical surgery)' : terminal.review.toothStatus} at the review of ${on} (imported).`, 'system');
        }
      }
    }
    for (const v of visits) {
      if (isOpenStatus(v.status) && v.windowEnd < today) move(v, 'missed', today, 'Missed: the window ended with no review on record (review import).', 'system', 'window_ended');
      else if (isOpenStatus(v.status) && v.dueDate < today && !options.remindOverdue) quietVisits.push(v.id);
    }
  }
  return { accepted, errors, duplicates, visitChanges, quietVisits };

  function findCase(row: ReviewImportRow, report: (column: string | undefined, reason: string) => void): ImportCaseInfo | undefined {
    const date = row.review.reviewDate;
    const fail = (column: string, reason: string): undefined => {
      report(column, reason);
      return undefined;
    };
    if (row.caseRef) {
      const ref = row.caseRef;
      const found = ref.length === 36 ? (byId.has(ref) ? [byId.get(ref)!] : []) : cases.filter((c) => c.id.startsWith(ref));
      if (found.length === 0) return fail('case_ref', `No case of this practice has the reference ${ref}.`);
      if (found.length > 1) return fail('case_ref', `The reference ${ref} fits ${found.length} cases: give more characters of the case’s id.`);
      const c = found[0]!;
      if (row.registryNumber && row.registryNumber !== c.registryNumber) return fail('registry_number', `Case ${ref} is of patient ${c.registryNumber}, not ${row.registryNumber}.`);
      if (row.tooth !== null && row.tooth !== c.tooth) return fail('tooth_fdi', `Case ${ref} is of tooth ${c.tooth}, not ${row.tooth}.`);
      return c;
    }
    const ofPatient = byPatient.get(row.registryNumber!);
    if (!ofPatient) return fail('registry_number', `No patient of this practice has the registry number ${row.registryNumber}.`);
    const onTooth = ofPatient.filter((c) => c.tooth === row.tooth && c.completionDate !== null);
    if (onTooth.length === 0) return fail('tooth_fdi', `Patient ${row.registryNumber} has no completed case on tooth ${row.tooth}.`);
    const before = onTooth.filter((c) => c.completionDate! <= date).sort((a, b) => (a.completionDate! < b.completionDate! ? 1 : -1));
    if (before.length === 0) {
      const first = onTooth.map((c) => c.completionDate!).sort()[0];
      return fail('review_date', `The review date ${date} is before the completion of the case on tooth ${row.tooth} (${first}).`);
    }
    if (before.length > 1 && before[0]!.completionDate === before[1]!.completionDate) {
      return fail('case_ref', `Patient ${row.registryNumber} has ${before.filter((c) => c.completionDate === before[0]!.completionDate).length} cases on tooth ${row.tooth} completed on ${before[0]!.completionDate}: give the case reference (case_ref) of the one reviewed.`);
    }
    return before[0];
  }
}
