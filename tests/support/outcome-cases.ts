/**
 * Hand-built rows of the outcomes engine (lib/outcomes' OutcomeCase) for the unit, reference and
 * integration tests, so each test names only the fields it is about. Pure: no database here (the
 * integration tests' world comes from ./db).
 */
import type { OutcomeCase } from '@/lib/outcomes';
import { addDaysTo, type CalendarDate } from '@/lib/registry/calendar-date';
import type { ClinicalSigns, RecordedReview, RecordedToothStatus } from '@/lib/scoring';

/** The completion date the unit tests' rows share. */
export const DONE: CalendarDate = '2020-01-01';
/** The date `days` days after DONE. */
export const at = (days: number) => addDaysTo(DONE, days);

/**
 * A primary treatment of a lower molar by 'u1', completed on DONE: PAI 4 with a 4 mm lesion, the
 * filling within 0–2 mm of the apex, no reviews, no open recall visit. `change` replaces any field.
 */
export function outcomeCase(change: Partial<OutcomeCase> = {}): OutcomeCase {
  return {
    id: 'a',
    patientId: 'p',
    operatorId: 'u1',
    kind: 'primary_treatment',
    completionDate: DONE,
    baselinePai: 4,
    lesionDiameterMm: 4,
    fillLengthClass: 'within',
    toothGroup: 'molar',
    toothArch: 'lower',
    previousCaseId: null,
    openVisit: false,
    reviews: [],
    ...change,
  };
}

/**
 * A review `day` days after `from` (DONE unless given) with no clinical signs unless given; the
 * PAI only when given (a terminal review may carry none).
 */
export function review(
  day: number,
  toothStatus: RecordedToothStatus,
  { paiScore, signs = {}, from = DONE }: { paiScore?: number | null; signs?: ClinicalSigns; from?: CalendarDate } = {},
): RecordedReview {
  return { reviewDate: addDaysTo(from, day), toothStatus, ...(paiScore === undefined ? {} : { paiScore }), signs };
}

/** A review `day` days after DONE with the tooth present, scored PAI `pai`. */
export const present = (day: number, pai: number, signs: ClinicalSigns = {}) => review(day, 'present', { paiScore: pai, signs });

/**
 * caseInput fields (tests/support/db) of a case of `kind` completed on `done`: started a week
 * before, with the pulpal diagnosis the kind needs (a retreatment's tooth was previously treated).
 */
export function completedOn(done: CalendarDate, kind: 'primary_treatment' | 'nonsurgical_retreatment' = 'primary_treatment') {
  return { kind, pulpalDiagnosis: kind === 'nonsurgical_retreatment' ? 'previously_treated' : 'pulp_necrosis', startDate: addDaysTo(done, -7), completionDate: done };
}
