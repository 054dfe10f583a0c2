import 'server-only';
import { randomUUID } from 'node:crypto';
import { ref } from '@mikro-orm/core';
import type { EntityManager } from '@mikro-orm/postgresql';
import { RecallVisitSchema, ReviewSchema, type RecallVisit, type Review, type TreatmentCase } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { isOpenStatus, type VisitStatus } from '@/lib/recall';
import { ReviewCorrectionReason } from '@/lib/schemas/review-correction';
import {
  EXTRACTION_REASON_LABELS,
  REVIEW_SIGNS,
  REVIEW_SIGN_LABELS,
  ReviewCreateSchema,
  TOOTH_STATUS_LABELS,
  type ExtractionReason,
  type ReviewSign,
  type ToothStatus,
} from '@/lib/schemas/review';
import {
  OUTCOME_LABELS,
  SCORING_CAUTION,
  TERMINAL_EVENT_OF_STATUS,
  assessRecordedReview,
  currentOutcome,
  type ReviewAssessment,
  type ReviewOutcome,
} from '@/lib/scoring';
import { auditRead, auditWithChanges } from './audit';
import { ConflictError, NotFoundError, ValidationError } from './errors';
import { parseInput } from './parse';
import { assertClinician, assertId, attempt, bodyId, findCase, knexOf, practiceSettings, settled, todayIn } from './registry-common';
import { changeVisitStatus, loadVisits, setVisitSummary, visitViews, type VisitView } from './visits';

export interface ReviewView {
  id: string;
  caseId: string;
  visitId: string | null;
  /** Milestone (months) of the visit it was recorded at; null for an unplanned review. */
  visitMilestone: number | null;
  assessor: { id: string; name: string | null };
  reviewDate: string;
  daysSinceCompletion: number;
  toothStatus: ToothStatus;
  toothStatusLabel: string;
  paiScore: number | null;
  lesionDiameterMm: number | null;
  signs: Partial<Record<ReviewSign, boolean>>;
  /** Labels of the signs recorded as present, in the form's order. */
  signsPresent: string[];
  /** One line of the findings for tables and the timeline: signs present (or none), other findings. */
  findings: string;
  otherFindings: string | null;
  /** The day of the extraction, retreatment or surgery when it is not the review date. */
  eventDate: string | null;
  extractionReason: ExtractionReason | null;
  extractionReasonLabel: string | null;
  /** Computed by lib/scoring from the findings — never typed. */
  outcome: ReviewOutcome;
  outcomeLabel: string;
  successStrict: boolean;
  successLenient: boolean;
  reasons: string[];
  createdAt: string;
  /** False for an earlier version a correction replaced (kept and shown as superseded; outcomes ignore it). */
  current: boolean;
  /** On a superseded version: the correction that replaced it, and when. */
  supersededBy: string | null;
  supersededAt: string | null;
  /** On a correction: the version it replaced, why, and who corrected it. */
  supersedes: string | null;
  correctionReason: string | null;
  correctedBy: { id: string; name: string | null } | null;
}

export interface CaseReviews {
  /** Every version, oldest first; superseded versions have current false. */
  reviews: ReviewView[];
  /** The outcome of the latest current review (by date), or null: "disease" with no next step recorded is shown as such. */
  latestOutcome: ReviewOutcome | null;
  /** The case's current outcome (lib/scoring currentOutcome); null before the first review. */
  currentOutcome: ReviewOutcome | null;
  currentOutcomeLabel: string | null;
  /** Show beside any outcome: it supports the clinician's judgement, it does not replace it. */
  caution: string;
}

export interface OutcomeInput {
  /** The case's PAI before treatment. */
  baselinePai: number;
  completionDate: string;
  reviewDate: string;
  toothStatus: ToothStatus;
  paiScore?: number | null;
  signs?: Partial<Record<ReviewSign, boolean>>;
  /** The practice's minimum observation time (days); the rules' default (365) when left out. */
  minObservationDays?: number;
}

/**
 * The outcome of a review by lib/scoring (`assessRecordedReview`: the case's PAI before treatment
 * against the PAI at the review). Every recorded sign is read as a sign of disease — tenderness to
 * percussion included (Friedman & Mor 2004) — except increased mobility, which is recorded only.
 */
export function computeOutcome(input: OutcomeInput): ReviewAssessment {
  return assessRecordedReview(
    { completionDate: input.completionDate, baselinePai: input.baselinePai },
    { reviewDate: input.reviewDate, toothStatus: input.toothStatus, paiScore: input.paiScore, signs: input.signs ?? {} },
    input.minObservationDays,
  );
}

/** The reviews of a case with their computed outcomes, oldest first. Audited as a read. */
export async function listReviews(em: EntityManager, actor: Actor, caseId: string): Promise<CaseReviews> {
  assertCan(actor, 'patient.read');
  const c = await findCase(em, actor, caseId);
  const result = await caseReviews(em, c.id);
  await auditRead(em, actor, { action: 'review.list', entityType: 'case', entityId: c.id });
  return result;
}

/**
 * Records a review of a completed case, at one of its visits (`visitId`; a visit not yet
 * attended is moved to attended when the table allows it, else 409) or unplanned (no visitId).
 * The assessor is the actor unless another clinician of the practice is named. The outcome is
 * computed, never taken from the input. A review that finds the tooth extracted, retreated or
 * operated cancels the case's open visits (planned, invited, confirmed): they are no longer needed.
 */
export async function createReview(
  em: EntityManager,
  actor: Actor,
  caseId: string,
  raw: unknown,
  correction?: { supersedes: Review; reason: string },
): Promise<ReviewRecorded> {
  assertCan(actor, 'review.write');
  return recordReview(em, actor, caseId, raw, correction);
}

type ReviewRecorded = { review: ReviewView; visits: VisitView[]; currentOutcome: ReviewOutcome | null; caution: string };

/** createReview without its permission check: for callers that checked their own (applyAgreedPai). */
async function recordReview(
  em: EntityManager,
  actor: Actor,
  caseId: string,
  raw: unknown,
  correction?: { supersedes: Review; reason: string },
): Promise<ReviewRecorded> {
  // The case, its visits and the assessor are read side by side (one round trip); what they answer
  // is judged in the order a reader expects: no such case (404), the input (422), the case's state
  // (409), the dates, then the assessor.
  const id = assertId(caseId, 'case');
  const body = raw && typeof raw === 'object' && !Array.isArray(raw) ? (raw as Record<string, unknown>) : {};
  const parsed = attempt(() => parseInput(ReviewCreateSchema, { ...body, caseId: id, assessorId: body.assessorId ?? actor.userId }));
  const [caseRead, visitsRead, assessorCheck] = await Promise.allSettled([
    findCase(em, actor, id),
    loadVisits(em, id),
    'value' in parsed ? assertClinician(em, actor.practiceId, parsed.value.assessorId, 'assessorId') : undefined,
  ]);
  const c = settled(caseRead);
  const input = settled(parsed);
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  if (!c.completionDate) throw new ConflictError('The case is not completed yet: a review follows the completion of treatment.');
  if (c.archivedAt) throw new ConflictError('The case is archived: restore it before recording a review.');
  if (input.reviewDate < c.completionDate) {
    throw new ValidationError('Some fields need attention.', { reviewDate: [`The review date is before the completion date (${c.completionDate}).`] });
  }
  if (input.reviewDate > today) throw new ValidationError('Some fields need attention.', { reviewDate: ['The review date is in the future.'] });
  settled(assessorCheck);
  const visits = settled(visitsRead);
  const who = { practiceId: actor.practiceId, userId: actor.userId };
  const visitId = bodyId(input.visitId, 'visitId', 'Choose one of this case’s visits.');
  if (visitId) {
    const visit = visits.find((v) => v.id === visitId);
    if (!visit) throw new ValidationError('Some fields need attention.', { visitId: ['Choose one of this case’s visits.'] });
    // Recording the review at a visit marks it attended in the same step (the patient is in the chair),
    // by the one rule: refused for a visit whose appointment or window begins after the review date.
    if (visit.status !== 'attended') {
      changeVisitStatus(em, visit, { to: 'attended', on: input.reviewDate, by: 'user' }, who, 'Attended: review recorded.');
    }
  }

  if (input.eventDate !== undefined) await assertEventDate(em, c.id, c.completionDate, input.eventDate, input.reviewDate);

  const signs: Partial<Record<ReviewSign, boolean>> = {};
  for (const key of REVIEW_SIGNS) {
    if (input[key] !== undefined) signs[key] = input[key];
  }
  const assessment = computeOutcome({
    baselinePai: c.paiScore,
    completionDate: c.completionDate,
    reviewDate: input.reviewDate,
    toothStatus: input.toothStatus,
    paiScore: input.paiScore,
    signs,
    minObservationDays: settings.minObservationDays,
  });
  const review = em.create(ReviewSchema, {
    id: randomUUID(), // known before the flush: the audit events below name it
    practice: actor.practiceId,
    case: c.id,
    visit: visitId ?? null,
    assessor: input.assessorId,
    reviewDate: input.reviewDate,
    daysSinceCompletion: assessment.daysSinceTreatment,
    toothStatus: input.toothStatus,
    paiScore: input.paiScore ?? null,
    lesionDiameterMm: input.lesionDiameterMm ?? null,
    signs,
    otherFindings: input.otherFindings ?? null,
    eventDate: input.eventDate ?? null,
    extractionReason: input.extractionReason ?? null,
    outcome: assessment.outcome,
    successStrict: assessment.successStrict,
    successLenient: assessment.successLenient,
    outcomeReasons: assessment.reasons,
    correctionReason: correction?.reason ?? null,
    correctedBy: correction ? actor.userId : null,
  });
  if (correction) {
    correction.supersedes.supersededBy = ref(review);
    correction.supersedes.supersededAt = new Date();
  }

  const cancelled: string[] = [];
  if (TERMINAL_EVENT_OF_STATUS[input.toothStatus]) {
    for (const v of visits) {
      if (v.id !== visitId && isOpenStatus(v.status as VisitStatus)) {
        const why = `Cancelled: ${TOOTH_STATUS_LABELS[input.toothStatus].toLowerCase()} at the review of ${input.reviewDate}.`;
        changeVisitStatus(em, v, { to: 'cancelled', on: today, by: 'user' }, who, why);
        v.note ??= why;
        cancelled.push(v.id);
      }
    }
  }
  setVisitSummary(c, visits);
  // The trail's events are written with the review, in its transaction.
  if (correction) {
    const old = correction.supersedes;
    // The trail names both versions: the correction (with the one it replaced) and the superseded one.
    auditWithChanges(em, actor, {
      action: 'review.corrected',
      entityType: 'review',
      entityId: review.id,
      detail: { caseId: c.id, supersedes: old.id, reason: correction.reason, outcome: { from: old.outcome, to: assessment.outcome }, cancelledVisits: cancelled },
    });
    auditWithChanges(em, actor, { action: 'review.superseded', entityType: 'review', entityId: old.id, detail: { caseId: c.id, supersededBy: review.id } });
  } else {
    auditWithChanges(em, actor, {
      action: 'review.created',
      entityType: 'review',
      entityId: review.id,
      detail: { caseId: c.id, visitId: visitId ?? null, outcome: assessment.outcome, cancelledVisits: cancelled },
    });
  }
  await em.flush();
  const all = await caseReviews(em, c.id, visits);
  return {
    review: all.reviews.find((r) => r.id === review.id)!,
    visits: await visitViews(em, visits, today, all.reviews),
    currentOutcome: all.currentOutcome,
    caution: SCORING_CAUTION,
  };
}

/**
 * An event date lies between completion and the review that records it, and not before an
 * earlier review of the case (that review saw the tooth as it was then).
 */
async function assertEventDate(em: EntityManager, caseId: string, completionDate: string, eventDate: string, reviewDate: string): Promise<void> {
  const problem = (message: string) => new ValidationError('Some fields need attention.', { eventDate: [message] });
  if (eventDate < completionDate) throw problem(`The event date is before the completion date (${completionDate}).`);
  const earlier = await em.findOne(ReviewSchema, { case: caseId, supersededBy: null, reviewDate: { $lte: reviewDate, $gt: eventDate } }, { fields: ['id', 'reviewDate'], orderBy: { reviewDate: 'desc' } });
  if (earlier) throw problem(`The review of ${earlier.reviewDate} comes after this date and found no such event: check the date, or correct that review.`);
}

/**
 * Corrects a saved review (the assessor or another clinician of the practice): the findings are
 * sent again in full (ReviewCreateSchema) with a `reason`. A new version is recorded at the same
 * visit, its outcome computed again; the earlier version is kept, marked superseded by the new one,
 * and left out of outcomes. The audit trail names both versions. Only the current version can be
 * corrected (409 otherwise). The assessor stays the original one unless another is named.
 */
export async function correctReview(em: EntityManager, actor: Actor, caseId: string, reviewId: string, raw: unknown) {
  assertCan(actor, 'review.write');
  const c = await findCase(em, actor, caseId);
  const old = await em.findOne(ReviewSchema, { id: assertId(reviewId, 'review'), case: c.id, practice: actor.practiceId });
  if (!old) throw new NotFoundError('No such review.');
  if (old.supersededBy) throw new ConflictError('This version was already corrected: correct the current version instead.');
  const body = raw && typeof raw === 'object' && !Array.isArray(raw) ? (raw as Record<string, unknown>) : {};
  const { reason } = parseInput(ReviewCorrectionReason, { reason: body.reason });
  return createReview(
    em,
    actor,
    c.id,
    { ...body, visitId: old.visit?.id ?? undefined, assessorId: body.assessorId ?? old.assessor.id },
    { supersedes: old, reason },
  );
}

/**
 * The agreed PAI of a film's readings (lib/reading/rules.ts, issue 13) becomes its review's score:
 * when it differs from the current version's PAI, a correction (a new version, the earlier one kept
 * and superseded) with the same findings and the agreed PAI, its outcome computed again by the same
 * rules as every review. A review of an extracted/retreated/operated tooth, or already at that PAI,
 * is left as it is (null). Called by the reading service, which checks the reader's permission
 * (`reading.queue` here: a blinded second reader or the lead's consensus need not hold review.write).
 */
export async function applyAgreedPai(em: EntityManager, actor: Actor, reviewId: string, pai: number, reason: string): Promise<ReviewRecorded | null> {
  assertCan(actor, 'reading.queue');
  const old = await em.findOne(ReviewSchema, { id: assertId(reviewId, 'review'), practice: actor.practiceId });
  if (!old) throw new NotFoundError('No such review.');
  if (old.supersededBy || old.toothStatus !== 'present' || old.paiScore === pai) return null;
  const body: Record<string, unknown> = {
    visitId: old.visit?.id ?? undefined,
    assessorId: old.assessor.id,
    reviewDate: old.reviewDate,
    toothStatus: old.toothStatus,
    paiScore: pai,
    // PAI 1 means no lesion: a diameter kept from the earlier version would contradict it
    ...(old.lesionDiameterMm !== null && old.lesionDiameterMm !== undefined ? { lesionDiameterMm: pai === 1 ? 0 : Number(old.lesionDiameterMm) } : {}),
    ...(old.otherFindings ? { otherFindings: old.otherFindings } : {}),
    ...(old.signs ?? {}),
  };
  return recordReview(em, actor, old.case.id, body, { supersedes: old, reason });
}

/**
 * Recomputes days and outcomes of a case's reviews after its completion date or baseline PAI
 * changed (the outcome depends on both). Throws a 422 when a review would fall before completion.
 */
export async function reassessReviews(em: EntityManager, c: TreatmentCase): Promise<number> {
  const reviews = await em.find(ReviewSchema, { case: c.id });
  if (reviews.length === 0) return 0;
  if (!c.completionDate) throw new ConflictError('The case has reviews: its completion date cannot be cleared.');
  const { minObservationDays } = await practiceSettings(em, c.practice.id);
  for (const r of reviews) {
    if (r.reviewDate < c.completionDate) {
      throw new ValidationError('Some fields need attention.', {
        completionDate: [`A review on ${r.reviewDate} would come before this completion date.`],
      });
    }
    const a = computeOutcome({
      baselinePai: c.paiScore,
      completionDate: c.completionDate,
      reviewDate: r.reviewDate,
      toothStatus: r.toothStatus as ToothStatus,
      paiScore: r.paiScore,
      signs: r.signs,
      minObservationDays,
    });
    r.daysSinceCompletion = a.daysSinceTreatment;
    r.outcome = a.outcome;
    r.successStrict = a.successStrict;
    r.successLenient = a.successLenient;
    r.outcomeReasons = a.reasons;
  }
  return reviews.length;
}

/**
 * A case's reviews as views, with the current outcome. No audit (callers audit their read). A caller
 * that reads the case's visits anyway (the case page, a saved review) passes them, read or being
 * read, and the reviews' milestones come from them: one query less.
 */
export async function caseReviews(
  em: EntityManager,
  caseId: string,
  caseVisits?: Promise<readonly Pick<RecallVisit, 'id' | 'milestone'>[]> | readonly Pick<RecallVisit, 'id' | 'milestone'>[],
): Promise<CaseReviews> {
  const knex = knexOf(em);
  const byReview = (column: string) => knex('review').select(column).where('case_id', caseId);
  // The people named by the reviews are read beside the reviews, not after them.
  const [reviews, given, people] = await Promise.all([
    em.find(ReviewSchema, { case: caseId }, { orderBy: { reviewDate: 'asc', createdAt: 'asc' } }),
    caseVisits ?? [],
    knex('app_user').whereIn('id', byReview('assessor_id')).orWhereIn('id', byReview('corrected_by_id')).select('id', 'name') as Promise<{ id: string; name: string | null }[]>,
  ]);
  const milestoneOf = new Map(given.map((v) => [v.id, v.milestone]));
  const unknownVisits = [...new Set(reviews.flatMap((r) => (r.visit && !milestoneOf.has(r.visit.id) ? [r.visit.id] : [])))];
  const visits = unknownVisits.length ? await em.find(RecallVisitSchema, { id: { $in: unknownVisits } }, { fields: ['id', 'milestone'] }) : [];
  const nameOf = new Map(people.map((u) => [u.id, u.name ?? null]));
  for (const v of visits) milestoneOf.set(v.id, v.milestone);
  // Outcomes read only current versions: a superseded one is kept for the record, not counted.
  const live = reviews.filter((r) => !r.supersededBy);
  const current = currentOutcome(live.map((r) => ({ daysSinceTreatment: r.daysSinceCompletion, outcome: r.outcome as ReviewOutcome })));
  const supersedes = new Map(reviews.flatMap((r) => (r.supersededBy ? [[r.supersededBy.id, r.id] as const] : [])));
  return {
    reviews: reviews.map((r) => ({
      id: r.id,
      caseId,
      visitId: r.visit?.id ?? null,
      visitMilestone: r.visit ? (milestoneOf.get(r.visit.id) ?? null) : null,
      assessor: { id: r.assessor.id, name: nameOf.get(r.assessor.id) ?? null },
      reviewDate: r.reviewDate,
      daysSinceCompletion: r.daysSinceCompletion,
      toothStatus: r.toothStatus as ToothStatus,
      toothStatusLabel: TOOTH_STATUS_LABELS[r.toothStatus as ToothStatus],
      paiScore: r.paiScore ?? null,
      lesionDiameterMm: r.lesionDiameterMm === null || r.lesionDiameterMm === undefined ? null : Number(r.lesionDiameterMm),
      signs: r.signs ?? {},
      signsPresent: signsPresent(r.signs ?? {}),
      findings: findingsLine(r.signs ?? {}, r.otherFindings ?? null),
      otherFindings: r.otherFindings ?? null,
      eventDate: r.eventDate ?? null,
      extractionReason: (r.extractionReason as ExtractionReason | null | undefined) ?? null,
      extractionReasonLabel: r.extractionReason ? EXTRACTION_REASON_LABELS[r.extractionReason as ExtractionReason] : null,
      outcome: r.outcome as ReviewOutcome,
      outcomeLabel: OUTCOME_LABELS[r.outcome as ReviewOutcome],
      successStrict: r.successStrict,
      successLenient: r.successLenient,
      reasons: r.outcomeReasons,
      createdAt: r.createdAt.toISOString(),
      current: !r.supersededBy,
      supersededBy: r.supersededBy?.id ?? null,
      supersededAt: r.supersededAt ? r.supersededAt.toISOString() : null,
      supersedes: supersedes.get(r.id) ?? null,
      correctionReason: r.correctionReason ?? null,
      correctedBy: r.correctedBy ? { id: r.correctedBy.id, name: nameOf.get(r.correctedBy.id) ?? null } : null,
    })),
    latestOutcome: (live.at(-1)?.outcome as ReviewOutcome | undefined) ?? null,
    currentOutcome: current,
    currentOutcomeLabel: current ? OUTCOME_LABELS[current] : null,
    caution: SCORING_CAUTION,
  };
}


function signsPresent(signs: Partial<Record<ReviewSign, boolean>>): string[] {
  return REVIEW_SIGNS.filter((k) => signs[k] === true).map((k) => REVIEW_SIGN_LABELS[k]);
}

/** "Signs: swelling, sinus tract. Other findings: …" — or "No signs recorded" / "No signs present". */
export function findingsLine(signs: Partial<Record<ReviewSign, boolean>>, other: string | null): string {
  const present = signsPresent(signs);
  const recorded = REVIEW_SIGNS.some((k) => signs[k] !== undefined);
  const first = present.length ? `Signs: ${present.join(', ').toLowerCase()}.` : recorded ? 'No signs present.' : 'No signs recorded.';
  return other ? `${first} Other findings: ${other}` : first;
}
