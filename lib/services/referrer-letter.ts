import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { ReviewSchema } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { CASE_KIND_LABELS, type CaseKind } from '@/lib/registry/case-kinds';
import { letterDate, type LetterFacts } from '@/lib/referrers/letter';
import { OPEN_VISIT_STATUSES, statusSql } from '@/lib/recall/status';
import type { NextStep } from '@/lib/outcomes/worklist';
import type { ReviewOutcome } from '@/lib/scoring';
import type { ReviewSign, ToothStatus } from '@/lib/schemas/review';
import { getObject } from '@/lib/storage/s3';
import { audit } from './audit';
import { NotFoundError, ValidationError } from './errors';
import { referrerWithAddress } from './referrer-links';
import { insertReferrerMessage, queueReferrerMessage } from './referrer-outbox';
import { assertId, displayName, knexOf, todayIn } from './registry-common';

/**
 * The outcome letter to the referring dentist (issue 13): after a review is recorded, the
 * clinician or coordinator sends it; the worker renders the PDF (lib/pdf/outcome-letter.tsx) from
 * `letterFacts` and mails it through the referrer outbox — one letter per review, ever (unique
 * kind + review), retried like a reminder, never twice. A corrected review is a new review: its
 * letter may be sent again.
 */

export interface LetterRequestResult {
  /** False when this review's letter was already queued or sent: nothing new was queued. */
  created: boolean;
  status: string;
  to: string;
  queued: boolean;
}

async function findReview(em: EntityManager, practiceId: string, reviewId: string) {
  const review = await em.findOne(ReviewSchema, { id: assertId(reviewId, 'review'), practice: practiceId });
  if (!review) throw new NotFoundError('No such review.');
  return review;
}

/** Queues the outcome letter of a review to the case's referrer (422 when the referrer has no address). */
export async function requestOutcomeLetter(em: EntityManager, actor: Actor, reviewId: string): Promise<LetterRequestResult> {
  assertCan(actor, 'referrer.send');
  const review = await findReview(em, actor.practiceId, reviewId);
  if (review.supersededBy) throw new ValidationError('This review was corrected: send the letter of the corrected review.');
  const c = (await knexOf(em)('treatment_case').where({ id: review.case.id, practice_id: actor.practiceId }).first('id', 'referrer_id')) as { id: string; referrer_id: string | null };
  const referrer = await referrerWithAddress(em, actor.practiceId, c.referrer_id);
  const row = await insertReferrerMessage(em, {
    practiceId: actor.practiceId,
    caseId: c.id,
    kind: 'outcome_letter',
    subjectId: review.id,
    referrerId: referrer.id,
    toAddress: referrer.email,
    requestedBy: actor.userId,
  });
  await audit(em, actor, {
    action: row.created ? 'referrer.letter_requested' : 'referrer.letter_repeated',
    entityType: 'case',
    entityId: c.id,
    detail: { review: review.id, message: row.id, status: row.status },
  });
  const queued = row.created ? await queueReferrerMessage(actor.practiceId, row.id) : false;
  return { created: row.created, status: row.status, to: referrer.email, queued };
}

interface FactsRow {
  case_id: string;
  tooth: number;
  kind: CaseKind;
  completion_date: string | null;
  given_name: string;
  family_name: string;
  date_of_birth: string;
  operator_name: string | null;
  operator_email: string;
  referrer_name: string | null;
  practice_name: string;
  address: string | null;
  phone: string | null;
  contact_email: string | null;
  time_zone: string;
  review_date: string;
  tooth_status: ToothStatus;
  pai_score: number | null;
  lesion_diameter_mm: string | number | null;
  signs: Partial<Record<ReviewSign, boolean>> | string | null;
  other_findings: string | null;
  outcome: ReviewOutcome;
  visit_id: string | null;
}

/** Everything the letter says, read for one review of the practice (the worker and tests call it). */
export async function letterFacts(em: EntityManager, practiceId: string, reviewId: string, now = new Date()): Promise<LetterFacts> {
  const knex = knexOf(em);
  const row = (await knex('review as r')
    .join('treatment_case as c', 'c.id', 'r.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .join('app_user as u', 'u.id', 'c.operator_id')
    .leftJoin('referrer as rf', 'rf.id', 'c.referrer_id')
    .join('practice as pr', 'pr.id', 'r.practice_id')
    .where({ 'r.id': reviewId, 'r.practice_id': practiceId })
    .first(
      'c.id as case_id',
      'c.tooth',
      'c.kind',
      knex.raw(`to_char(c.completion_date, 'YYYY-MM-DD') as completion_date`),
      'p.given_name',
      'p.family_name',
      knex.raw(`to_char(p.date_of_birth, 'YYYY-MM-DD') as date_of_birth`),
      'u.name as operator_name',
      'u.email as operator_email',
      'rf.name as referrer_name',
      'pr.name as practice_name',
      'pr.address',
      'pr.phone',
      'pr.contact_email',
      'pr.time_zone',
      knex.raw(`to_char(r.review_date, 'YYYY-MM-DD') as review_date`),
      'r.tooth_status',
      'r.pai_score',
      'r.lesion_diameter_mm',
      'r.signs',
      'r.other_findings',
      'r.outcome',
      'r.visit_id',
    )) as FactsRow | undefined;
  if (!row) throw new NotFoundError('No such review.');
  const decision = (await knex('case_decision as d')
    .where('d.case_id', row.case_id)
    .whereNotExists(knex('case_decision as n').whereRaw('n.replaces_id = d.id').select(knex.raw('1')))
    .orderBy('d.created_at', 'desc')
    .first('d.step', knex.raw(`to_char(d.date, 'YYYY-MM-DD') as date`), 'd.note')) as { step: NextStep; date: string; note: string | null } | undefined;
  const next = (await knex('recall_visit')
    .where('case_id', row.case_id)
    .whereRaw(`status in ${statusSql(OPEN_VISIT_STATUSES)}`)
    .where('due_date', '>', row.review_date)
    .orderBy('due_date', 'asc')
    .first('milestone', knex.raw(`to_char(due_date, 'YYYY-MM-DD') as due_date`))) as { milestone: number; due_date: string } | undefined;
  // The film: the review's own, else the visit's, else the case's latest follow-up film.
  const film = (await knex('film')
    .where({ case_id: row.case_id })
    .whereNull('archived_at')
    .orderByRaw(`(review_id = ?) desc nulls last, (visit_id is not distinct from ?) desc, (role = 'follow_up') desc, created_at desc`, [reviewId, row.visit_id])
    .first('thumbnail_key')) as { thumbnail_key: string } | undefined;
  const thumbnail = film ? await getObject(film.thumbnail_key).catch(() => null) : null;
  const signs = typeof row.signs === 'string' ? (JSON.parse(row.signs) as Partial<Record<ReviewSign, boolean>>) : (row.signs ?? {});
  return {
    practiceName: row.practice_name,
    practiceContact: [row.address, row.phone, row.contact_email].filter((x): x is string => Boolean(x && x.trim())),
    referrerName: row.referrer_name ?? 'colleague',
    patientName: displayName({ givenName: row.given_name, familyName: row.family_name }),
    patientBirthDate: row.date_of_birth,
    tooth: row.tooth,
    kindLabel: CASE_KIND_LABELS[row.kind],
    completionDate: row.completion_date,
    clinicianName: row.operator_name ?? row.operator_email,
    review: {
      date: row.review_date,
      toothStatus: row.tooth_status,
      paiScore: row.pai_score,
      lesionDiameterMm: row.lesion_diameter_mm === null ? null : Number(row.lesion_diameter_mm),
      signs,
      otherFindings: row.other_findings,
      outcome: row.outcome,
    },
    decision: decision ?? null,
    nextRecall: next ? { milestone: next.milestone, dueDate: next.due_date } : null,
    thumbnail: thumbnail ? new Uint8Array(thumbnail) : null,
    dated: letterDate(todayIn(row.time_zone, now)),
  };
}
