/**
 * Outcome of one review of a root-canal-treated tooth, in the categories of
 * Friedman & Mor (2004, J Calif Dent Assoc 32:493–503), and success in the
 * strict and lenient senses of Ng et al. (2007, Int Endod J 40:921–939).
 *
 * Lamina's rules, applied in this order:
 *  1. A terminal event recorded at the review — tooth extracted, retreated,
 *     apical surgery — is the outcome.
 *  2. disease: any clinical sign or symptom (sinus tract, swelling, pain on
 *     biting, tenderness to palpation, spontaneous pain); or a lesion that is
 *     new (none at baseline), unchanged or larger than at baseline; or a
 *     lesion still only smaller than at baseline more than four years
 *     (1461 days) after treatment (common practice, following the European
 *     Society of Endodontology's 2006 quality guidelines).
 *  3. healed: clinically normal and no lesion (PAI 1–2; CBCT-PAI 0 by diameter).
 *  4. healing: clinically normal, lesion smaller than at baseline, review at
 *     most 1461 days after treatment (day 1461 is still within the window).
 * Success strict = healed; success lenient = healed or healing.
 *
 * The lesion is compared on one scale: both PAI scores, or both diameters in
 * mm (CBCT). Mixing the two is an error, as a PAI score and a diameter cannot
 * be compared.
 */
import { cbctPaiScore } from './cbct-pai';
import { roundMm } from './measure';
import { checkPai, PAI_HEALTHY_MAX } from './pai';

export type TerminalEvent = 'tooth-extracted' | 'retreated' | 'apical-surgery';
export type ReviewOutcome = 'healed' | 'healing' | 'disease' | TerminalEvent;

export const TERMINAL_EVENTS: readonly TerminalEvent[] = ['tooth-extracted', 'retreated', 'apical-surgery'];

export const OUTCOME_LABELS: Readonly<Record<ReviewOutcome, string>> = {
  healed: 'Healed',
  healing: 'Healing',
  disease: 'Disease',
  'tooth-extracted': 'Tooth extracted',
  retreated: 'Retreated',
  'apical-surgery': 'Apical surgery',
};

/** The observation window for "healing": four years, in days (4 x 365.25). */
export const HEALING_WINDOW_DAYS = 1461;

/** A lesion measured on one of the two scales. */
export type LesionMeasure = { pai: number } | { diameterMm: number };

export interface ClinicalSigns {
  sinusTract?: boolean;
  swelling?: boolean;
  painOnBiting?: boolean;
  tenderToPalpation?: boolean;
  spontaneousPain?: boolean;
}

const SIGN_WORDS: Readonly<Record<keyof ClinicalSigns, string>> = {
  sinusTract: 'sinus tract',
  swelling: 'swelling',
  painOnBiting: 'pain on biting',
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
  for (const key of Object.keys(SIGN_WORDS) as (keyof ClinicalSigns)[]) {
    if (signs[key] === true) reasons.push(SIGN_WORDS[key]);
  }
  if (now.lesion) {
    if (!base.lesion) reasons.push('new lesion');
    else if (now.size === base.size) reasons.push('lesion unchanged');
    else if (now.size > base.size) reasons.push('lesion larger');
    else if (days > HEALING_WINDOW_DAYS) reasons.push('lesion smaller but still present after four years');
  }
  if (reasons.length > 0) return result(days, 'disease', reasons);
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
  disease: 2,
  retreated: 3,
  'apical-surgery': 4,
  'tooth-extracted': 5,
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

const isTerminal = (o: ReviewOutcome): o is TerminalEvent => (TERMINAL_EVENTS as readonly string[]).includes(o);

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
 * Time to failure: days from completion to the first review showing disease
 * or a terminal event (event = true); otherwise censored at the last review.
 * The failure is only seen at a visit, so true failure times are
 * interval-censored between two reviews; Lamina, like the literature, takes
 * the date of the visit. null when there is no review.
 */
export function timeToFailure(reviews: readonly ReviewedOutcome[]): TimeObservation | null {
  return firstEventOrCensored(reviews, (o) => o === 'disease' || isTerminal(o));
}

/**
 * Tooth survival: days to the review recording extraction (event = true);
 * otherwise censored at the last review. Retreatment and apical surgery keep
 * the tooth and are not events here. null when there is no review.
 */
export function toothSurvival(reviews: readonly ReviewedOutcome[]): TimeObservation | null {
  return firstEventOrCensored(reviews, (o) => o === 'tooth-extracted');
}

/** Days to the first review whose outcome is an event (event = true), else censored at the last review; null without reviews. */
function firstEventOrCensored(reviews: readonly ReviewedOutcome[], isEvent: (o: ReviewOutcome) => boolean): TimeObservation | null {
  const s = sortedReviews(reviews);
  if (s.length === 0) return null;
  const first = s.find((r) => isEvent(r.outcome));
  if (first) return { time: first.daysSinceTreatment, event: true };
  return { time: s[s.length - 1].daysSinceTreatment, event: false };
}
