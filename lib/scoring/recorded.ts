/**
 * Reviews as Lamina records them (tooth status, PAI on the case's scale, signs, the event's own
 * date) turned into the scoring rules' inputs. One home for that mapping: the review service,
 * the demo seed and the migration that recomputes stored outcomes all use it.
 *
 * The lesion is compared on the PAI scale — the case's PAI before treatment against the PAI at
 * the review — because every case and every review of a present tooth has one (diameters are
 * kept for display and for CBCT later; mixing scales is refused by the rules).
 */
import { daysBetween, type CalendarDate } from '../registry/calendar-date';
import type { CaseHistory, ObservedReview } from './observations';
import { assessReview, type ClinicalSigns, type ReviewAssessment, type TerminalEvent } from './outcome';

export type RecordedToothStatus = 'present' | 'extracted' | 'retreated' | 'surgery';

export const TERMINAL_EVENT_OF_STATUS: Readonly<Record<RecordedToothStatus, TerminalEvent | undefined>> = {
  present: undefined,
  extracted: 'tooth-extracted',
  retreated: 'retreated',
  surgery: 'apical-surgery',
};

export interface RecordedReview {
  reviewDate: CalendarDate;
  toothStatus: RecordedToothStatus;
  paiScore?: number | null;
  signs?: ClinicalSigns | null;
  /** The day a terminal event happened, when it is not the review date. */
  eventDate?: CalendarDate | null;
}

export interface RecordedCase {
  completionDate: CalendarDate;
  /** The case's PAI before treatment. */
  baselinePai: number;
}

/** The outcome of a recorded review by `assessReview`, with the practice's minimum observation time. */
export function assessRecordedReview(c: RecordedCase, r: RecordedReview, minObservationDays?: number): ReviewAssessment {
  const terminalEvent = TERMINAL_EVENT_OF_STATUS[r.toothStatus];
  return assessReview({
    daysSinceTreatment: daysBetween(c.completionDate, r.reviewDate),
    baseline: { pai: c.baselinePai },
    ...(r.paiScore !== undefined && r.paiScore !== null ? { current: { pai: r.paiScore } } : {}),
    signs: r.signs ?? {},
    ...(terminalEvent ? { terminalEvent } : {}),
    ...(minObservationDays !== undefined ? { minObservationDays } : {}),
  });
}

/**
 * A case's history for `caseObservations`. For the tooth-loss endpoint pass the reviews of the
 * tooth's later, linked cases (its retreatment, its surgery) as well: they keep the tooth followed.
 */
export function recordedHistory(c: RecordedCase, reviews: readonly RecordedReview[]): CaseHistory {
  return {
    completedOn: c.completionDate,
    baseline: { pai: c.baselinePai },
    reviews: reviews.map((r): ObservedReview => {
      const terminalEvent = TERMINAL_EVENT_OF_STATUS[r.toothStatus];
      return {
        date: r.reviewDate,
        ...(r.paiScore !== undefined && r.paiScore !== null && !terminalEvent ? { pai: r.paiScore } : {}),
        ...(r.signs ? { signs: r.signs } : {}),
        ...(terminalEvent ? { terminalEvent } : {}),
        ...(terminalEvent && r.eventDate ? { eventDate: r.eventDate } : {}),
      };
    }),
  };
}
