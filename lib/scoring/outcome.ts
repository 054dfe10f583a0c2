/**
 * Outcome of one review of a root-canal-treated tooth, in the categories of
 * Friedman & Mor (2004, J Calif Dent Assoc 32:493–503), and success in the
 * strict and lenient senses of Ng et al. (2007, Int Endod J 40:921–939).
 *
 * Lamina's rules, applied in this order:
 *  1. A terminal event recorded at the review — tooth extracted, retreated,
 *     apical surgery — is the outcome.
 *  2. disease: any clinical sign or symptom (sinus tract, swelling, pain on
 *     biting, tenderness to percussion, tenderness to palpation, spontaneous
 *     pain — Friedman & Mor 2004 count tenderness to percussion and to
 *     palpation as signs of disease); or a lesion that is new (none at
 *     baseline) or larger than at baseline, at any time; or a lesion
 *     unchanged from baseline at a review on or after the practice's minimum
 *     observation time (default 365 days); or a lesion still only smaller
 *     than at baseline more than four years (1461 days) after treatment
 *     (the European Society of Endodontology's 2006 quality guidelines:
 *     judge at one year, follow an unchanged or smaller lesion up to four).
 *  3. uncertain: clinically normal and a lesion unchanged from baseline at a
 *     review before the minimum observation time — too early to judge
 *     (ESE 2006). Neither success nor failure.
 *  4. healed: clinically normal and no lesion (PAI 1–2; CBCT-PAI 0 by diameter).
 *  5. healing: clinically normal, lesion smaller than at baseline, review at
 *     most 1461 days after treatment (day 1461 is still within the window).
 * Success strict = healed; success lenient = healed or healing. Increased
 * mobility is recorded but is not read: it is a periodontal finding, not
 * one of Friedman & Mor's signs of apical disease.
 *
 * The lesion is compared on one scale: both PAI scores, or both diameters in
 * mm (CBCT). Mixing the two is an error, as a PAI score and a diameter cannot
 * be compared.
 */
import { cbctPaiScore } from './cbct-pai';
import { roundMm } from './measure';
import { checkPai, PAI_HEALTHY_MAX } from './pai';

export type TerminalEvent = 'tooth-extracted' | 'retreated' | 'apical-surgery';
export type ReviewOutcome = 'healed' | 'healing' | 'uncertain' | 'disease' | TerminalEvent;

export const TERMINAL_EVENTS: readonly TerminalEvent[] = ['tooth-extracted', 'retreated', 'apical-surgery'];

export const OUTCOME_LABELS: Readonly<Record<ReviewOutcome, string>> = {
  healed: 'Healed',
  healing: 'Healing',
  uncertain: 'Uncertain',
  disease: 'Disease',
  'tooth-extracted': 'Tooth extracted',
  retreated: 'Retreated',
  'apical-surgery': 'Apical surgery',
};

/** The observation window for "healing": four years, in days (4 x 365.25). */
export const HEALING_WINDOW_DAYS = 1461;

/**
 * The default minimum observation time, in days: before it an unchanged lesion is
 * "uncertain", from it on "disease" (ESE 2006: judge at one year). A practice may set its own.
 */
export const DEFAULT_MIN_OBSERVATION_DAYS = 365;

/** A lesion measured on one of the two scales. */
export type LesionMeasure = { pai: number } | { diameterMm: number };

export interface ClinicalSigns {
  sinusTract?: boolean;
  swelling?: boolean;
  painOnBiting?: boolean;
  tenderToPercussion?: boolean;
  tenderToPalpation?: boolean;
  spontaneousPain?: boolean;
  /** Recorded, not read by the rules (a periodontal finding, not a sign of apical disease). */
  mobility?: boolean;
}

type ScoredSign = Exclude<keyof ClinicalSigns, 'mobility'>;

const SIGN_WORDS: Readonly<Record<ScoredSign, string>> = {
  sinusTract: 'sinus tract',
  swelling: 'swelling',
  painOnBiting: 'pain on biting',
  tenderToPercussion: 'tender to percussion',
  tenderToPalpation: 'tender to palpation',
  spontaneousPain: 'spontaneous pain',
};

export interface ReviewFindings {
  /** days from completion of treatment to this review (>= 0) */
  daysSinceTreatment: number;
  /** the lesion at treatment */
  baseline: LesionMeasure;
  /** the lesion at this review; may be left out only when a terminal event is recorded */
  current?: LesionMeasure;
  signs?: ClinicalSigns;
  terminalEvent?: TerminalEvent;
  /**
   * The practice's minimum observation time in days (default 365): an unchanged lesion
   * before it is uncertain, from it on disease.
   */
  minObservationDays?: number;
}

export interface ReviewAssessment {
  daysSinceTreatment: number;
  outcome: ReviewOutcome;
  successStrict: boolean;
  successLenient: boolean;
  /** short plain reasons for the outcome, for display beside it */
  reasons: string[];
}

interface Reading {
  lesion: boolean;
  /** comparable size: the PAI score or the rounded diameter */
  size: number;
}

function read(m: LesionMeasure, what: string): Reading & { scale: 'pai' | 'diameter' } {
  if (m === null || typeof m !== 'object') throw new TypeError(`${what}: expected { pai } or { diameterMm }`);
  const hasPai = 'pai' in m;
  const hasDiameter = 'diameterMm' in m;
  if (hasPai === hasDiameter) throw new TypeError(`${what}: give exactly one of pai or diameterMm`);
  if (hasPai) {
    const s = checkPai((m as { pai: number }).pai);
    return { scale: 'pai', lesion: s > PAI_HEALTHY_MAX, size: s };
  }
  const raw = (m as { diameterMm: number }).diameterMm;
  const d = roundMm(raw, `${what} lesion diameter`);
  if (d < 0) throw new RangeError(`${what}: lesion diameter cannot be negative, got ${raw}`);
  return { scale: 'diameter', lesion: cbctPaiScore(d) > 0, size: d };
}

function result(days: number, outcome: ReviewOutcome, reasons: string[]): ReviewAssessment {
  return {
    daysSinceTreatment: days,
    outcome,
    successStrict: outcome === 'healed',
    successLenient: outcome === 'healed' || outcome === 'healing',
    reasons,
  };
}

function checkMinObservation(days: unknown): number {
  if (days === undefined) return DEFAULT_MIN_OBSERVATION_DAYS;
  if (typeof days !== 'number' || !Number.isInteger(days) || days < 0 || days > HEALING_WINDOW_DAYS) {
    throw new RangeError(`minObservationDays must be whole days from 0 to ${HEALING_WINDOW_DAYS}, got ${String(days)}`);
  }
  return days;
}

function checkDays(days: unknown): number {
  if (typeof days !== 'number' || !Number.isFinite(days) || days < 0) {
    throw new RangeError(`daysSinceTreatment must be a number of days >= 0, got ${String(days)}`);
  }
  return days;
}

/** The outcome of one review (see the rules at the top of this file). */
export function assessReview(f: ReviewFindings): ReviewAssessment {
  if (f === null || typeof f !== 'object') throw new TypeError('assessReview expects the review findings');
  const days = checkDays(f.daysSinceTreatment);
  const minObservation = checkMinObservation(f.minObservationDays);
  if (f.terminalEvent !== undefined) {
    if (!TERMINAL_EVENTS.includes(f.terminalEvent)) {
      throw new RangeError(`terminalEvent must be one of ${TERMINAL_EVENTS.join(', ')}, got ${String(f.terminalEvent)}`);
    }
    return result(days, f.terminalEvent, [OUTCOME_LABELS[f.terminalEvent].toLowerCase()]);
  }
  if (f.current === undefined) throw new TypeError('assessReview: the lesion at this review (current) is needed unless a terminal event is recorded');
  const base = read(f.baseline, 'baseline');
  const now = read(f.current, 'this review');
  if (base.scale !== now.scale) {
    throw new RangeError('assessReview: baseline and review lesions must be on the same scale (both PAI or both diameter in mm)');
  }
  const reasons: string[] = [];
  const signs = f.signs ?? {};
  for (const key of Object.keys(SIGN_WORDS) as ScoredSign[]) {
    if (signs[key] === true) reasons.push(SIGN_WORDS[key]);
  }
  const unchanged = now.lesion && base.lesion && now.size === base.size;
  const early = days < minObservation;
  if (now.lesion) {
    if (!base.lesion) reasons.push('new lesion');
    else if (unchanged && !early) reasons.push('lesion unchanged');
    else if (now.size > base.size) reasons.push('lesion larger');
    else if (now.size < base.size && days > HEALING_WINDOW_DAYS) reasons.push('lesion smaller but still present after four years');
  }
  if (reasons.length > 0) return result(days, 'disease', reasons);
  if (unchanged) {
    return result(days, 'uncertain', ['clinically normal', `lesion unchanged before the minimum observation time (${minObservation} days): too early to judge`]);
  }
  if (!now.lesion) return result(days, 'healed', ['clinically normal', 'no lesion']);
  return result(days, 'healing', ['clinically normal', 'lesion smaller than at baseline']);
}

/** What the case-level functions need from each review. */
export interface ReviewedOutcome {
  daysSinceTreatment: number;
  outcome: ReviewOutcome;
}

const SEVERITY: Readonly<Record<ReviewOutcome, number>> = {
  healed: 0,
  healing: 1,
  uncertain: 2,
  disease: 3,
  retreated: 4,
  'apical-surgery': 5,
  'tooth-extracted': 6,
};

function sortedReviews(reviews: readonly ReviewedOutcome[]): ReviewedOutcome[] {
  if (!Array.isArray(reviews)) throw new TypeError('expected an array of reviews');
  reviews.forEach((r: ReviewedOutcome, i: number) => {
    if (r === null || typeof r !== 'object' || !Object.prototype.hasOwnProperty.call(SEVERITY, r.outcome)) {
      throw new RangeError(`review ${i}: expected { daysSinceTreatment, outcome }`);
    }
    checkDays(r.daysSinceTreatment);
  });
  // by day, and on the same day the more severe outcome last, so the result
  // does not depend on the order the reviews were given in
  return [...reviews].sort((a: ReviewedOutcome, b: ReviewedOutcome) => a.daysSinceTreatment - b.daysSinceTreatment || SEVERITY[a.outcome] - SEVERITY[b.outcome]);
}

export const isTerminal = (o: ReviewOutcome): o is TerminalEvent => (TERMINAL_EVENTS as readonly string[]).includes(o);
/** A failure of the healing endpoint: disease or a terminal event. Uncertain is not one. */
export const isFailure = (o: ReviewOutcome): boolean => o === 'disease' || isTerminal(o);

/**
 * The case's current outcome: that of its latest review, except that a
 * terminal event ends the case — once a tooth is extracted, retreated or has
 * apical surgery, the first such event stays the outcome. Two reviews on the
 * same day count as one with the more severe outcome. null when there is no review.
 */
export function currentOutcome(reviews: readonly ReviewedOutcome[]): ReviewOutcome | null {
  const s = sortedReviews(reviews);
  if (s.length === 0) return null;
  const firstTerminal = s.find((r) => isTerminal(r.outcome));
  if (firstTerminal) {
    const sameDay = s.filter((r) => r.daysSinceTreatment === firstTerminal.daysSinceTreatment && isTerminal(r.outcome));
    return sameDay[sameDay.length - 1].outcome;
  }
  return s[s.length - 1].outcome;
}

/** A survival observation in days, the shape lib/stats takes. */
export interface TimeObservation {
  time: number;
  event: boolean;
}

/**
 * Time to failure, as a { time, event } observation on review dates: the failure that
 * stands — disease or a terminal event at the latest review, as `currentOutcome` — dated
 * at the first review of its unbroken run of failing reviews (event = true); otherwise
 * censored at the last review. An early disease that a later review finds resolved
 * (healed, healing or uncertain) is not a failure: the two functions always agree.
 * The failure is only seen at a visit; `caseObservations` gives the honest interval.
 * null when there is no review.
 */
export function timeToFailure(reviews: readonly ReviewedOutcome[]): TimeObservation | null {
  const s = sortedReviews(reviews);
  if (s.length === 0) return null;
  let runStart: number | null = null;
  for (const r of s) {
    if (isTerminal(r.outcome)) return { time: runStart ?? r.daysSinceTreatment, event: true };
    if (r.outcome === 'disease') runStart ??= r.daysSinceTreatment;
    else runStart = null; // on one day the more severe outcome sorts last, so a same-day healed cannot undo a disease
  }
  if (runStart !== null) return { time: runStart, event: true };
  return { time: s[s.length - 1].daysSinceTreatment, event: false };
}

/**
 * Tooth survival: days to the review recording extraction (event = true);
 * otherwise censored at the last review. Retreatment and apical surgery keep
 * the tooth and are not events here. null when there is no review.
 */
export function toothSurvival(reviews: readonly ReviewedOutcome[]): TimeObservation | null {
  const s = sortedReviews(reviews);
  if (s.length === 0) return null;
  const first = s.find((r) => r.outcome === 'tooth-extracted');
  if (first) return { time: first.daysSinceTreatment, event: true };
  return { time: s[s.length - 1].daysSinceTreatment, event: false };
}
