/**
 * Review: one follow-up assessment of a case, at an attended recall visit or unplanned.
 * Raw findings only — the outcome (healed, healing, disease; extracted, retreated, surgery) is
 * computed from them by the scoring rules and is never typed by hand, so this schema has no
 * outcome field (an `outcome` key in the input is dropped like any unknown key).
 *
 * Tooth status: present, or found extracted / retreated / operated (apical surgery) since the
 * last review. An extracted tooth has nothing to score, so PAI, lesion and signs are dropped for
 * it; a present tooth needs its PAI (Ørstavik 1986) and lesion diameter (0 = none).
 *
 * An extraction, retreatment or apical surgery that happened on another day (elsewhere, reported
 * at this review) may carry its own `eventDate`; an extraction records its reason.
 */
import { z } from 'zod';
import { Id, blankAsUndefined, calendarDate, text } from '@/lib/registry/fields';
import { LesionDiameterMm, PaiScore, paiLesionMismatch } from './case';

export const TOOTH_STATUSES = ['present', 'extracted', 'retreated', 'surgery'] as const;
export type ToothStatus = (typeof TOOTH_STATUSES)[number];
export const TOOTH_STATUS_LABELS: Record<ToothStatus, string> = {
  present: 'Present',
  extracted: 'Extracted',
  retreated: 'Retreated',
  surgery: 'Apical surgery done',
};

/** Why an extracted tooth was extracted. */
export const EXTRACTION_REASONS = ['endodontic', 'fracture', 'periodontal', 'other'] as const;
export type ExtractionReason = (typeof EXTRACTION_REASONS)[number];
export const EXTRACTION_REASON_LABELS: Record<ExtractionReason, string> = {
  endodontic: 'Endodontic (persistent disease)',
  fracture: 'Fracture',
  periodontal: 'Periodontal disease',
  other: 'Other reason',
};

/** The statuses that record an event: the tooth extracted, retreated or operated. */
export const EVENT_STATUSES: readonly ToothStatus[] = ['extracted', 'retreated', 'surgery'];

/**
 * Clinical signs and symptoms at the review (each yes/no; absent = not recorded). The scoring rules
 * read every one as a sign of disease except increased mobility, which is recorded and not scored
 * (a periodontal finding, not one of Friedman & Mor's 2004 signs; lib/scoring/README.md).
 */
export const REVIEW_SIGNS = [
  'painOnBiting',
  'tenderToPercussion',
  'tenderToPalpation',
  'spontaneousPain',
  'swelling',
  'sinusTract',
  'mobility',
] as const;
export type ReviewSign = (typeof REVIEW_SIGNS)[number];
/** The signs the outcome rules read (all but mobility). */
export const SCORED_REVIEW_SIGNS: readonly ReviewSign[] = REVIEW_SIGNS.filter((s) => s !== 'mobility');
export const REVIEW_SIGN_LABELS: Record<ReviewSign, string> = {
  painOnBiting: 'Pain on biting',
  tenderToPercussion: 'Tender to percussion',
  tenderToPalpation: 'Tender to palpation',
  spontaneousPain: 'Spontaneous pain',
  swelling: 'Swelling',
  sinusTract: 'Sinus tract',
  mobility: 'Increased mobility',
};

const SCORED_FIELDS = ['paiScore', 'lesionDiameterMm', ...REVIEW_SIGNS, 'otherFindings'] as const;

const ReviewObject = z.object({
  id: Id,
  caseId: Id,
  /** The attended recall visit; absent for an unplanned review. */
  visitId: blankAsUndefined(Id),
  assessorId: Id,
  reviewDate: calendarDate('the review date'),
  toothStatus: z.enum(TOOTH_STATUSES, { error: `Choose the tooth status: ${TOOTH_STATUSES.join(', ')}.` }),
  paiScore: PaiScore.optional(),
  lesionDiameterMm: LesionDiameterMm.optional(),
  painOnBiting: z.boolean().optional(),
  tenderToPercussion: z.boolean().optional(),
  tenderToPalpation: z.boolean().optional(),
  spontaneousPain: z.boolean().optional(),
  swelling: z.boolean().optional(),
  sinusTract: z.boolean().optional(),
  mobility: z.boolean().optional(),
  otherFindings: blankAsUndefined(text({ max: 500 })),
  /** The day of the extraction, retreatment or surgery, when not the review date. */
  eventDate: blankAsUndefined(calendarDate('the date of the event')),
  extractionReason: blankAsUndefined(
    z.enum(EXTRACTION_REASONS, { error: `Choose the reason for the extraction: ${EXTRACTION_REASONS.join(', ')}.` }),
  ),
});

type ReviewShape = Partial<z.output<typeof ReviewObject>>;

/** Drops the findings of an extracted tooth before validation. */
function dropForExtracted(input: unknown): unknown {
  if (!input || typeof input !== 'object' || (input as { toothStatus?: unknown }).toothStatus !== 'extracted') return input;
  const out = { ...(input as Record<string, unknown>) };
  for (const key of SCORED_FIELDS) delete out[key];
  return out;
}

const reviewRules =
  (partial: boolean) =>
  (r: ReviewShape, ctx: z.RefinementCtx): void => {
    if (r.toothStatus === 'present') {
      if (r.paiScore === undefined && (!partial || 'paiScore' in r)) {
        ctx.addIssue({ code: 'custom', path: ['paiScore'], message: 'Score the periapical index (1–5) of the tooth.' });
      }
      if (r.lesionDiameterMm === undefined && (!partial || 'lesionDiameterMm' in r)) {
        ctx.addIssue({ code: 'custom', path: ['lesionDiameterMm'], message: 'Enter the largest lesion diameter in mm (0 when there is none).' });
      }
    }
    const mismatch = paiLesionMismatch(r.paiScore, r.lesionDiameterMm);
    if (mismatch) ctx.addIssue({ code: 'custom', path: ['lesionDiameterMm'], message: mismatch });
    if (r.toothStatus !== undefined && r.eventDate !== undefined && !EVENT_STATUSES.includes(r.toothStatus)) {
      ctx.addIssue({ code: 'custom', path: ['eventDate'], message: 'An event date goes with an extraction, retreatment or apical surgery; leave it empty for a present tooth.' });
    }
    if (r.eventDate !== undefined && r.reviewDate !== undefined && r.eventDate > r.reviewDate) {
      ctx.addIssue({ code: 'custom', path: ['eventDate'], message: 'The event cannot come after the review that records it.' });
    }
    if (r.toothStatus !== undefined && r.extractionReason !== undefined && r.toothStatus !== 'extracted') {
      ctx.addIssue({ code: 'custom', path: ['extractionReason'], message: 'A reason goes with an extraction only.' });
    }
  };

const wrap = <T extends z.ZodType>(schema: T) => z.preprocess(dropForExtracted, schema);

/** A stored review. */
export const ReviewSchema = wrap(ReviewObject.superRefine(reviewRules(false)));
/** A new review from the entry form or the API; the assessor may be set by the service. */
export const ReviewCreateSchema = wrap(ReviewObject.omit({ id: true }).superRefine(reviewRules(false)));
/**
 * One row of the review import (lib/registry/review-csv.ts): the findings of a past review, without
 * ids — the import service finds the case, the assessor and the visit itself.
 */
export const ReviewImportSchema = wrap(ReviewObject.omit({ id: true, caseId: true, visitId: true, assessorId: true }).superRefine(reviewRules(false)));
/** A correction to some findings. */
export const ReviewUpdateSchema = wrap(ReviewObject.omit({ id: true, caseId: true }).partial().superRefine(reviewRules(true)));

export type Review = z.output<typeof ReviewSchema>;
export type ReviewCreate = z.output<typeof ReviewCreateSchema>;
export type ReviewUpdate = z.output<typeof ReviewUpdateSchema>;
export type ReviewImport = z.output<typeof ReviewImportSchema>;
export type ReviewFormValues = z.input<typeof ReviewObject>;
