/**
 * The outcome letter to a referring dentist (issue 13): its words, from a recorded review. Pure:
 * lib/services/referrer-letter.ts reads the facts, lib/pdf/outcome-letter.tsx draws them.
 */
import { OUTCOME_LABELS, SCORING_CAUTION, type ReviewOutcome } from '@/lib/scoring';
import { REVIEW_SIGNS, REVIEW_SIGN_LABELS, TOOTH_STATUS_LABELS, type ReviewSign, type ToothStatus } from '@/lib/schemas/review';
import { NEXT_STEP_DATE_LABELS, NEXT_STEP_LABELS, type NextStep } from '@/lib/outcomes/worklist';

/** The letter's caution: Lamina supports the clinician's judgement and does not diagnose. */
export const LETTER_CAUTION =
  `${SCORING_CAUTION} The outcome supports clinical judgement and does not diagnose; ` +
  'decisions rest with the treating and referring dentists in their licensed practice.';

export interface LetterFacts {
  practiceName: string;
  practiceContact: string[];
  referrerName: string;
  patientName: string;
  patientBirthDate: string;
  tooth: number;
  kindLabel: string;
  completionDate: string | null;
  clinicianName: string;
  review: {
    date: string;
    toothStatus: ToothStatus;
    paiScore: number | null;
    lesionDiameterMm: number | null;
    signs: Partial<Record<ReviewSign, boolean>>;
    otherFindings: string | null;
    outcome: ReviewOutcome;
  };
  /** The case's recorded next step, when there is one. */
  decision: { step: NextStep; date: string; note: string | null } | null;
  /** The next open recall visit, when there is one. */
  nextRecall: { milestone: number; dueDate: string } | null;
  /** The film's thumbnail (JPEG bytes), when the case has a film. */
  thumbnail: Uint8Array | null;
  /** "2 Dec 2026" */
  dated: string;
}

export interface LetterContent {
  title: string;
  salutation: string;
  opening: string;
  treatment: [string, string][];
  findings: [string, string][];
  outcome: string;
  nextStep: string;
  caution: string;
  closing: string[];
}

/** "5 Mar 2024" from an ISO date (the one date format on screen and paper). */
export function letterDate(iso: string): string {
  const [y, m, d] = iso.slice(0, 10).split('-').map(Number) as [number, number, number];
  const months = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];
  return `${d} ${months[m - 1]} ${y}`;
}

/** The signs as a sentence: those present, then "none of …" for the recorded absent ones. */
export function signsText(signs: Partial<Record<ReviewSign, boolean>>): string {
  const present = REVIEW_SIGNS.filter((s) => signs[s] === true).map((s) => REVIEW_SIGN_LABELS[s].toLowerCase());
  const recorded = REVIEW_SIGNS.filter((s) => typeof signs[s] === 'boolean').length;
  if (recorded === 0) return 'Not recorded';
  if (present.length === 0) return 'None of the recorded signs or symptoms';
  return present.join(', ').replace(/^./, (c) => c.toUpperCase());
}

export function nextStepText(f: Pick<LetterFacts, 'decision' | 'nextRecall'>): string {
  if (f.decision) {
    const d = f.decision;
    return `${NEXT_STEP_LABELS[d.step]}: ${NEXT_STEP_DATE_LABELS[d.step].toLowerCase()} ${letterDate(d.date)}${d.note ? ` (${d.note})` : ''}.`;
  }
  if (f.nextRecall) return `The next follow-up review is the ${f.nextRecall.milestone}-month recall, due ${letterDate(f.nextRecall.dueDate)}.`;
  return 'No further follow-up review is planned.';
}

export function letterContent(f: LetterFacts): LetterContent {
  const r = f.review;
  const findings: [string, string][] = [
    ['Review date', letterDate(r.date)],
    ['Tooth', TOOTH_STATUS_LABELS[r.toothStatus]],
  ];
  if (r.toothStatus === 'present') {
    findings.push(['Periapical index (PAI)', r.paiScore === null ? 'Not recorded' : `${r.paiScore} of 5`]);
    findings.push(['Largest lesion diameter', r.lesionDiameterMm === null ? 'Not recorded' : `${r.lesionDiameterMm} mm`]);
    findings.push(['Signs and symptoms', signsText(r.signs)]);
  }
  if (r.otherFindings) findings.push(['Other findings', r.otherFindings]);
  return {
    title: `Follow-up of tooth ${f.tooth}`,
    salutation: `Dear ${f.referrerName},`,
    opening: `Thank you for referring ${f.patientName} (born ${letterDate(f.patientBirthDate)}). This letter reports the follow-up review of tooth ${f.tooth} (FDI) treated at ${f.practiceName}.`,
    treatment: [
      ['Tooth (FDI)', String(f.tooth)],
      ['Treatment', f.kindLabel],
      ['Completed', f.completionDate ? letterDate(f.completionDate) : 'In progress'],
      ['Clinician', f.clinicianName],
    ],
    findings,
    outcome: OUTCOME_LABELS[r.outcome],
    nextStep: nextStepText(f),
    caution: LETTER_CAUTION,
    closing: ['With kind regards,', f.clinicianName, f.practiceName, ...f.practiceContact],
  };
}
