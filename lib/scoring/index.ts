/**
 * Lamina's scoring rules: pure functions with no I/O, shared by screens,
 * jobs, exports and the demo seed.
 *
 * - periapical index (PAI 1–5) and the CBCT periapical index (0–5 with E/D)
 * - fill-length class of a root filling
 * - outcome of one review (healed, healing, uncertain, disease; tooth
 *   extracted, retreated, apical surgery) with success strict / lenient
 * - the case's current outcome, time to failure and tooth survival, as
 *   { time, event } observations for lib/stats
 * - a case's healing and tooth-loss endpoints as interval-censored
 *   observations (caseObservations)
 *
 * Scores support clinical judgement and do not diagnose: show
 * SCORING_CAUTION beside them. Rules and boundaries: lib/scoring/README.md.
 */
export { SCORING_CAUTION } from './caution';
export { roundMm } from './measure';
export { PAI_LEVELS, PAI_HEALTHY_MAX, checkPai, paiLevel, isApicalPeriodontitis } from './pai';
export type { PaiScore, PaiLevel } from './pai';
export { cbctPai, cbctPaiScore, CBCT_PAI_UPPER_MM, CBCT_PAI_DESCRIPTIONS } from './cbct-pai';
export type { CbctPaiScore, CbctPaiResult } from './cbct-pai';
export { fillLengthClass, FILL_LENGTH_LABELS, FILL_WITHIN_MAX_MM } from './fill-length';
export type { FillLengthClass } from './fill-length';
export {
  assessReview,
  currentOutcome,
  timeToFailure,
  toothSurvival,
  isFailure,
  isTerminal,
  DEFAULT_MIN_OBSERVATION_DAYS,
  HEALING_WINDOW_DAYS,
  OUTCOME_LABELS,
  TERMINAL_EVENTS,
} from './outcome';
export { caseObservations } from './observations';
export type { CaseHistory, CaseObservations, Interval, ObservedReview, ObservationOptions } from './observations';
export { assessRecordedReview, recordedHistory, TERMINAL_EVENT_OF_STATUS } from './recorded';
export type { RecordedCase, RecordedReview, RecordedToothStatus } from './recorded';
export type {
  ReviewOutcome,
  TerminalEvent,
  LesionMeasure,
  ClinicalSigns,
  ReviewFindings,
  ReviewAssessment,
  ReviewedOutcome,
  TimeObservation,
} from './outcome';
