import 'server-only';
import { randomUUID } from 'node:crypto';
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
import { auditEventRow, auditRead, type AuditInput } from './audit';
import { ConflictError, NotFoundError, ValidationError } from './errors';
import { parseInput } from './parse';
import { assertClinician, assertId, attempt, bodyId, findCase, insertWithChanges, knexOf, practiceSettings, settled, todayIn, type Timestamp } from './registry-common';
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
  const [caseRead, visitsRead, assessorCheck, reviewsRead] = await Promise.allSettled([
    findCase(em, actor, id),
    loadVisits(em, id),
    'value' in parsed ? assertClinician(em, actor.practiceId, parsed.value.assessorId, 'assessorId') : null,
    readReviewRows(em, id),
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
  const assessorName = settled(assessorCheck);
  const visits = settled(visitsRead);
  const earlier = settled(reviewsRead);
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
  const now = new Date();
  const row: ReviewTableRow = {
    id: randomUUID(), // known before the write: the audit events and a correction's marking name it
    practice_id: actor.practiceId,
    case_id: c.id,
    visit_id: visitId ?? null,
    assessor_id: input.assessorId,
    review_date: input.reviewDate,
    days_since_completion: assessment.daysSinceTreatment,
    tooth_status: input.toothStatus,
    pai_score: input.paiScore ?? null,
    lesion_diameter_mm: input.lesionDiameterMm ?? null,
    signs,
    other_findings: input.otherFindings ?? null,
    event_date: input.eventDate ?? null,
    extraction_reason: input.extractionReason ?? null,
    outcome: assessment.outcome,
    success_strict: assessment.successStrict,
    success_lenient: assessment.successLenient,
    outcome_reasons: assessment.reasons,
    superseded_by_id: null,
    superseded_at: null,
    correction_reason: correction?.reason ?? null,
    corrected_by_id: correction ? actor.userId : null,
    created_at: now,
    updated_at: now,
  };
  if (correction) {
    correction.supersedes.supersededBy = em.getReference(ReviewSchema, row.id, { wrapped: true });
    correction.supersedes.supersededAt = now;
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
  // The trail's events are written with the review, in the same statement.
  const events: AuditInput[] = correction
    ? [
        // The trail names both versions: the correction (with the one it replaced) and the superseded one.
        {
          action: 'review.corrected',
          entityType: 'review',
          entityId: row.id,
          detail: { caseId: c.id, supersedes: correction.supersedes.id, reason: correction.reason, outcome: { from: correction.supersedes.outcome, to: assessment.outcome }, cancelledVisits: cancelled },
        },
        { action: 'review.superseded', entityType: 'review', entityId: correction.supersedes.id, detail: { caseId: c.id, supersededBy: row.id } },
      ]
    : [{ action: 'review.created', entityType: 'review', entityId: row.id, detail: { caseId: c.id, visitId: visitId ?? null, outcome: assessment.outcome, cancelledVisits: cancelled } }];
  // One statement for the review and its events; the visits' moves and a correction's marking, if
  // any, flushed after it in the same transaction (insertWithChanges).
  await insertWithChanges(em, (knex) =>
    knex
      .with('saved_review', knex('review').insert(row))
      .insert(events.map((e) => auditEventRow(actor, e)))
      .into('audit_event'),
  );
  // The answer's reviews are those read before the write with this one added (and the one a
  // correction replaces marked so), as a read after the write would give them: no read after it.
  const saved: ReviewRow = { ...row, assessor_name: assessorName, corrected_by_name: correction ? actor.name : null };
  const rows = earlier.map((r) =>
    correction && r.id === correction.supersedes.id ? { ...r, superseded_by_id: row.id, superseded_at: now } : r,
  );
  const all = await reviewViews(em, c.id, [...rows, saved].sort(byReviewOrder), visits);
  return {
    review: all.reviews.find((r) => r.id === row.id)!,
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

/** The review table's row as a save writes it (one plain insert, with its audit events: recordReview). */
interface ReviewTableRow {
  id: string;
  practice_id: string;
  case_id: string;
  visit_id: string | null;
  assessor_id: string;
  review_date: string;
  days_since_completion: number;
  tooth_status: Review['toothStatus'];
  pai_score: number | null;
  lesion_diameter_mm: number | null;
  /** jsonb: the driver sends an object as its JSON */
  signs: Partial<Record<ReviewSign, boolean>>;
  other_findings: string | null;
  event_date: string | null;
  extraction_reason: NonNullable<Review['extractionReason']> | null;
  outcome: Review['outcome'];
  success_strict: boolean;
  success_lenient: boolean;
  /** text[]: the driver sends an array as its array literal */
  outcome_reasons: string[];
  superseded_by_id: null;
  superseded_at: null;
  correction_reason: string | null;
  corrected_by_id: string | null;
  created_at: Date;
  updated_at: Date;
}

/** A review row as caseReviews reads it, with the names of its assessor and of whoever corrected it. */
interface ReviewRow {
  id: string;
  visit_id: string | null;
  assessor_id: string;
  assessor_name: string | null;
  review_date: string;
  days_since_completion: number;
  tooth_status: string;
  pai_score: number | null;
  lesion_diameter_mm: string | number | null;
  signs: Partial<Record<ReviewSign, boolean>> | null;
  other_findings: string | null;
  event_date: string | null;
  extraction_reason: string | null;
  outcome: string;
  success_strict: boolean;
  success_lenient: boolean;
  outcome_reasons: string[] | null;
  created_at: Timestamp;
  superseded_by_id: string | null;
  superseded_at: Timestamp | null;
  correction_reason: string | null;
  corrected_by_id: string | null;
  corrected_by_name: string | null;
}

/** A case's review rows, in the order the views show them (review date, then entry), with the people's names joined. */
function readReviewRows(em: EntityManager, caseId: string): Promise<ReviewRow[]> {
  const knex = knexOf(em);
  return knex('review as r')
    .leftJoin('app_user as a', 'a.id', 'r.assessor_id')
    .leftJoin('app_user as k', 'k.id', 'r.corrected_by_id')
    .where('r.case_id', caseId)
    .orderBy([{ column: 'r.review_date' }, { column: 'r.created_at' }, { column: 'r.id' }])
    .select(
      'r.id',
      'r.visit_id',
      'r.assessor_id',
      'a.name as assessor_name',
      knex.raw('r.review_date::text as review_date'),
      'r.days_since_completion',
      'r.tooth_status',
      'r.pai_score',
      'r.lesion_diameter_mm',
      'r.signs',
      'r.other_findings',
      knex.raw('r.event_date::text as event_date'),
      'r.extraction_reason',
      'r.outcome',
      'r.success_strict',
      'r.success_lenient',
      'r.outcome_reasons',
      'r.created_at',
      'r.superseded_by_id',
      'r.superseded_at',
      'r.correction_reason',
      'r.corrected_by_id',
      'k.name as corrected_by_name',
    ) as Promise<ReviewRow[]>;
}

/** The order of readReviewRows (review date, entry time, id), for rows put together in memory. */
function byReviewOrder(a: ReviewRow, b: ReviewRow): number {
  if (a.review_date !== b.review_date) return a.review_date < b.review_date ? -1 : 1;
  const t = new Date(a.created_at).getTime() - new Date(b.created_at).getTime();
  if (t !== 0) return t;
  return a.id < b.id ? -1 : a.id > b.id ? 1 : 0;
}

/**
 * A case's reviews as views, with the current outcome. No audit (callers audit their read). One
 * plain read (no entities: the case page is the busiest read of reviews) with the people's names
 * joined. A caller that reads the case's visits anyway (the case page, a saved review) passes them,
 * read or being read, and the reviews' milestones come from them: one query less.
 */
export async function caseReviews(
  em: EntityManager,
  caseId: string,
  caseVisits?: Promise<readonly Pick<RecallVisit, 'id' | 'milestone'>[]> | readonly Pick<RecallVisit, 'id' | 'milestone'>[],
): Promise<CaseReviews> {
  const [reviews, given] = await Promise.all([readReviewRows(em, caseId), caseVisits ?? []]);
  return reviewViews(em, caseId, reviews, given);
}

/** Review rows as views, with the current outcome; the milestones from the given visits (a visit not among them is read). */
async function reviewViews(em: EntityManager, caseId: string, reviews: readonly ReviewRow[], given: readonly Pick<RecallVisit, 'id' | 'milestone'>[]): Promise<CaseReviews> {
  const milestoneOf = new Map(given.map((v) => [v.id, v.milestone]));
  const unknownVisits = [...new Set(reviews.flatMap((r) => (r.visit_id && !milestoneOf.has(r.visit_id) ? [r.visit_id] : [])))];
  const visits = unknownVisits.length ? await em.find(RecallVisitSchema, { id: { $in: unknownVisits } }, { fields: ['id', 'milestone'] }) : [];
  for (const v of visits) milestoneOf.set(v.id, v.milestone);
  // Outcomes read only current versions: a superseded one is kept for the record, not counted.
  const live = reviews.filter((r) => !r.superseded_by_id);
  const current = currentOutcome(live.map((r) => ({ daysSinceTreatment: r.days_since_completion, outcome: r.outcome as ReviewOutcome })));
  const supersedes = new Map(reviews.flatMap((r) => (r.superseded_by_id ? [[r.superseded_by_id, r.id] as const] : [])));
  return {
    reviews: reviews.map((r) => ({
      id: r.id,
      caseId,
      visitId: r.visit_id ?? null,
      visitMilestone: r.visit_id ? (milestoneOf.get(r.visit_id) ?? null) : null,
      assessor: { id: r.assessor_id, name: r.assessor_name ?? null },
      reviewDate: r.review_date,
      daysSinceCompletion: r.days_since_completion,
      toothStatus: r.tooth_status as ToothStatus,
      toothStatusLabel: TOOTH_STATUS_LABELS[r.tooth_status as ToothStatus],
      paiScore: r.pai_score ?? null,
      lesionDiameterMm: r.lesion_diameter_mm === null || r.lesion_diameter_mm === undefined ? null : Number(r.lesion_diameter_mm),
      signs: r.signs ?? {},
      signsPresent: signsPresent(r.signs ?? {}),
      findings: findingsLine(r.signs ?? {}, r.other_findings ?? null),
      otherFindings: r.other_findings ?? null,
      eventDate: r.event_date ?? null,
      extractionReason: (r.extraction_reason as ExtractionReason | null | undefined) ?? null,
      extractionReasonLabel: r.extraction_reason ? EXTRACTION_REASON_LABELS[r.extraction_reason as ExtractionReason] : null,
      outcome: r.outcome as ReviewOutcome,
      outcomeLabel: OUTCOME_LABELS[r.outcome as ReviewOutcome],
      successStrict: r.success_strict,
      successLenient: r.success_lenient,
      reasons: r.outcome_reasons ?? [],
      createdAt: new Date(r.created_at).toISOString(),
      current: !r.superseded_by_id,
      supersededBy: r.superseded_by_id ?? null,
      supersededAt: r.superseded_at ? new Date(r.superseded_at).toISOString() : null,
      supersedes: supersedes.get(r.id) ?? null,
      correctionReason: r.correction_reason ?? null,
      correctedBy: r.corrected_by_id ? { id: r.corrected_by_id, name: r.corrected_by_name ?? null } : null,
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
