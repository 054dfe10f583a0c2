/**
 * Visits and reviews (issue 10): the one transition rule as the services apply it — attended and
 * missed not before the visit begins, missed with a reason and undone the same day, the review
 * that marks the visit of the day attended, one close-as-lost routine with its contact log — and
 * review corrections that keep the superseded version, recompute outcomes and name both versions.
 */
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema } from '@/entities';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { createCase, getCase, listCases } from '@/lib/services/cases';
import { ConflictError } from '@/lib/services/errors';
import { createPatient } from '@/lib/services/patients';
import { markVisits } from '@/lib/services/recall-desk';
import { todayIn } from '@/lib/services/registry-common';
import { correctReview, createReview, listReviews } from '@/lib/services/reviews';
import { closeVisitAsLost, listVisits, updateVisit } from '@/lib/services/visits';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const today = todayIn('Europe/London');
const monthsAgo = (n: number) => addMonthsClamped(today, -n);
const knex = () => services.em().getKnex();
const log = (visitId: string) =>
  knex()('contact_log_entry').where({ visit_id: visitId }).orderBy('at').select('kind', 'by', 'from_status', 'to_status', 'note') as Promise<
    { kind: string; by: string; from_status: string | null; to_status: string | null; note: string | null }[]
  >;

/** A case completed 12 months ago: its 12-month visit is due today (window begun), 24 months is far off. */
async function world() {
  const a = await makeRegistryPractice(services.em(), 'alder');
  const patient = await createPatient(services.em(), a.clinician, patientInput());
  const completion = monthsAgo(12);
  const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: addDaysTo(completion, -7), completionDate: completion, paiScore: 4 }));
  const v = (m: number) => c.visits.find((x) => x.milestone === m)!;
  return { a, c, v };
}

describe('attended and missed: not before the visit begins', () => {
  it('a visit booked for a later date cannot be attended now (409 saying why); on the day it can', async () => {
    const { a, v } = await world();
    const booked = addDaysTo(today, 20);
    await updateVisit(services.em(), a.coordinator, v(12).id, { status: 'confirmed', bookedDate: booked });
    await expect(updateVisit(services.em(), a.coordinator, v(12).id, { status: 'attended' })).rejects.toMatchObject({
      status: 409,
      message: `The 12-month visit is booked for ${booked}: it cannot be marked attended before then. If the patient came early, change the appointment date first.`,
    });
    // The far visit (24 months) offers neither attended nor missed.
    const after = await updateVisit(services.em(), a.coordinator, v(12).id, { bookedDate: today });
    expect(after.find((x) => x.milestone === 24)!.allowedNext).not.toContain('attended');
    expect(after.find((x) => x.milestone === 24)!.allowedNext).not.toContain('missed');
    expect(after.find((x) => x.milestone === 12)).toMatchObject({ ofTheDay: true, started: true });
    const attended = await updateVisit(services.em(), a.coordinator, v(12).id, { status: 'attended' });
    expect(attended.find((x) => x.milestone === 12)!.status).toBe('attended');
    // The desk applies the same rule, row by row.
    const r = await markVisits(services.em(), a.coordinator, { visitIds: [v(24).id], status: 'missed', reason: 'no_show' });
    expect(r.results[0]).toMatchObject({ ok: false, outcome: 'refused', message: expect.stringMatching(/^The 24-month visit has its window from .*: it cannot be marked missed before then\.$/) });
  });
});

describe('missed: with a reason, undone the same day', () => {
  it('asks why, keeps the reason, and undo restores the status it had; the next day undo is refused', async () => {
    const { a, v } = await world();
    const id = v(12).id;
    await updateVisit(services.em(), a.coordinator, id, { status: 'confirmed', bookedDate: today });
    await expect(updateVisit(services.em(), a.coordinator, id, { status: 'missed' })).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/Say why the visit was missed/) });
    await expect(markVisits(services.em(), a.coordinator, { visitIds: [id], status: 'missed' })).rejects.toMatchObject({ status: 422, fieldErrors: { reason: expect.any(Array) } });
    let visits = await updateVisit(services.em(), a.coordinator, id, { status: 'missed', missedReason: 'cancelled_late' });
    expect(visits.find((x) => x.id === id)).toMatchObject({ status: 'missed', missedReason: 'cancelled_late', missedReasonLabel: 'Cancelled late', canUndoMissed: true });
    // the case page reads its visits plainly (no entities): the same views as the visits read through the ORM
    const caseId = visits.find((x) => x.id === id)!.caseId;
    expect((await getCase(services.em(), a.clinician, caseId)).visits).toEqual(await listVisits(services.em(), a.clinician, caseId));
    visits = await updateVisit(services.em(), a.coordinator, id, { undoMissed: true });
    expect(visits.find((x) => x.id === id)).toMatchObject({ status: 'confirmed', bookedDate: today, missedReason: null, canUndoMissed: false });
    expect((await log(id)).map((e) => [e.from_status, e.to_status, e.note])).toEqual([
      ['planned', 'confirmed', null],
      ['confirmed', 'missed', 'Cancelled late'],
      ['missed', 'confirmed', 'Undone: “missed” was recorded by mistake.'],
    ]);

    // Through the desk, then a day later: the undo is refused.
    const r = await markVisits(services.em(), a.coordinator, { visitIds: [id], status: 'missed', reason: 'unreachable' });
    expect(r.results[0]).toMatchObject({ ok: true, message: 'Marked missed.' });
    await knex()('recall_visit').where({ id }).update({ missed_on: addDaysTo(today, -1) });
    await expect(updateVisit(services.em(), a.coordinator, id, { undoMissed: true })).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/only the same day/) });
  });
});

describe('the review marks the visit of the day attended', () => {
  it('a clinician records the review at the confirmed visit of the day: attended in the same step, in the contact log', async () => {
    const { a, c, v } = await world();
    await updateVisit(services.em(), a.coordinator, v(12).id, { status: 'confirmed', bookedDate: today });
    const r = await createReview(services.em(), a.clinician, c.id, { visitId: v(12).id, reviewDate: today, toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });
    expect(r.visits.find((x) => x.milestone === 12)).toMatchObject({ status: 'attended', reviewIds: [r.review.id] });
    expect((await log(v(12).id)).at(-1)).toMatchObject({ kind: 'status_change', by: 'user', from_status: 'confirmed', to_status: 'attended', note: 'Attended: review recorded.' });
    // The case page and the saved review take each visit's reviews from the case's reviews they
    // read (no second read): the same as the visits read on their own (listVisits), a corrected
    // review by its current version only.
    const reviewsOf = (visits: readonly { id: string; reviewIds: string[] }[]) => visits.map((x) => [x.id, x.reviewIds]);
    const alone = reviewsOf(await listVisits(services.em(), a.clinician, c.id));
    expect(reviewsOf(r.visits)).toEqual(alone);
    expect(reviewsOf((await getCase(services.em(), a.clinician, c.id)).visits)).toEqual(alone);
    const fixed = await correctReview(services.em(), a.clinician, c.id, r.review.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, reason: 'Scored on the wrong film.' });
    const after = reviewsOf(await listVisits(services.em(), a.clinician, c.id));
    expect(after.find(([id]) => id === v(12).id)![1]).toEqual([fixed.review.id]);
    expect(reviewsOf(fixed.visits)).toEqual(after);
    expect(reviewsOf((await getCase(services.em(), a.clinician, c.id)).visits)).toEqual(after);
  });

  it('refuses a review dated before the visit’s appointment', async () => {
    const { a, c, v } = await world();
    await updateVisit(services.em(), a.coordinator, v(12).id, { status: 'confirmed', bookedDate: addDaysTo(today, 5) });
    await expect(createReview(services.em(), a.clinician, c.id, { visitId: v(12).id, reviewDate: today, toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 })).rejects.toBeInstanceOf(ConflictError);
  });
});

describe('a review’s refusals, judged in order though the case, its visits and the assessor are read side by side', () => {
  it('no such case (404) before a bad body; a bad body (422) before the case’s state; the case’s state (409) and the dates before the assessor', async () => {
    const { a, c } = await world();
    const good = { reviewDate: today, toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 };
    const other = await makeRegistryPractice(services.em(), 'birch');
    const notClinician = a.coordinator.userId;
    // another practice's case, with a bad body and an assessor who is no clinician: 404
    await expect(createReview(services.em(), other.clinician, c.id, { ...good, paiScore: 9, assessorId: notClinician })).rejects.toMatchObject({ status: 404 });
    await expect(createReview(services.em(), a.clinician, 'not-a-case', { ...good, paiScore: 9 })).rejects.toMatchObject({ status: 404 });
    // the body (422) before the case's state
    const open = await createCase(services.em(), a.clinician, caseInput(c.patient.id, a.clinician.userId, { tooth: 46, startDate: monthsAgo(1), completionDate: undefined, canals: [] }));
    await expect(createReview(services.em(), a.clinician, open.id, { ...good, paiScore: 9 })).rejects.toMatchObject({ status: 422, fieldErrors: { paiScore: expect.any(Array) } });
    // the case's state (409), then the dates, before the assessor
    await expect(createReview(services.em(), a.clinician, open.id, { ...good, assessorId: notClinician })).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/not completed/) });
    await expect(createReview(services.em(), a.clinician, c.id, { ...good, reviewDate: addDaysTo(today, 1), assessorId: notClinician })).rejects.toMatchObject({
      status: 422,
      fieldErrors: { reviewDate: ['The review date is in the future.'] },
    });
    await expect(createReview(services.em(), a.clinician, c.id, { ...good, assessorId: notClinician })).rejects.toMatchObject({ status: 422, fieldErrors: { assessorId: expect.any(Array) } });
    expect(await services.em().count(AuditEventSchema, { action: 'review.created' })).toBe(0);
    // and a good one is recorded
    expect((await createReview(services.em(), a.clinician, c.id, good)).review.outcome).toBeTruthy();
  });
});

describe('a saved review answers what a read after the write gives', () => {
  it('a review at a visit, another assessor’s review, a correction and an extraction that cancels visits: the answer equals the case’s reviews and visits read again', async () => {
    const { a, c, v } = await world();
    const same = async (saved: Awaited<ReturnType<typeof createReview>>) => {
      const read = await listReviews(services.em(), a.clinician, c.id);
      expect(saved.review).toEqual(read.reviews.find((r) => r.id === saved.review.id));
      expect(saved.currentOutcome).toBe(read.currentOutcome);
      expect(saved.visits).toEqual(await listVisits(services.em(), a.clinician, c.id));
      return read;
    };
    await updateVisit(services.em(), a.coordinator, v(12).id, { status: 'confirmed', bookedDate: today });
    const atVisit = await createReview(services.em(), a.clinician, c.id, { visitId: v(12).id, reviewDate: today, toothStatus: 'present', paiScore: 3, lesionDiameterMm: 1.5, tenderToPercussion: true, otherFindings: 'Slight tenderness.' });
    await same(atVisit);
    const other = await createReview(services.em(), a.clinician, c.id, { assessorId: a.clinician2.userId, reviewDate: addDaysTo(today, -3), toothStatus: 'present', paiScore: 2, lesionDiameterMm: 1 });
    expect(other.review.assessor.name).not.toBeNull();
    await same(other);
    const fixed = await correctReview(services.em(), a.clinician2, c.id, atVisit.review.id, { visitId: v(12).id, reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0.5, reason: 'Read on the wrong film.' });
    const afterFix = await same(fixed);
    expect(afterFix.reviews.find((r) => r.id === atVisit.review.id)).toMatchObject({ current: false, supersededBy: fixed.review.id });
    expect(fixed.review.correctedBy).toEqual({ id: a.clinician2.userId, name: expect.any(String) });
    const extracted = await createReview(services.em(), a.clinician, c.id, { reviewDate: today, toothStatus: 'extracted', extractionReason: 'fracture' });
    await same(extracted);
    expect(extracted.visits.filter((x) => x.status === 'cancelled').length).toBeGreaterThan(0);
    // the case page's plain read of the visits gives the same views (attended, cancelled with a note)
    expect((await getCase(services.em(), a.clinician, c.id)).visits).toEqual(extracted.visits);
  });
});

describe('close as lost: one routine', () => {
  it('the desk’s close writes a contact-log entry for every visit it closes, as the scan does', async () => {
    const { a, v } = await world();
    await closeVisitAsLost(services.em(), a.coordinator, v(12).id, { note: 'Moved abroad.' });
    expect(await log(v(12).id)).toEqual([{ kind: 'status_change', by: 'user', from_status: 'planned', to_status: 'closed', note: 'Moved abroad.' }]);
    expect(await log(v(24).id)).toEqual([{ kind: 'status_change', by: 'user', from_status: 'planned', to_status: 'closed', note: 'Closed with an earlier visit lost to follow-up.' }]);
  });
});

describe('review corrections', () => {
  it('keeps the earlier version as superseded, recomputes the outcome, and the audit trail names both versions', async () => {
    const { a, c } = await world();
    const first = await createReview(services.em(), a.clinician, c.id, {
      reviewDate: today,
      toothStatus: 'present',
      paiScore: 2,
      lesionDiameterMm: 0,
      sinusTract: true,
      swelling: false,
      otherFindings: 'Sinus tract buccal to 36.',
    });
    expect(first.review).toMatchObject({ outcome: 'disease', findings: 'Signs: sinus tract. Other findings: Sinus tract buccal to 36.' });
    let detail = await getCase(services.em(), a.auditor, c.id);
    expect(detail.latestOutcome).toBe('disease');
    expect(detail.timeline.find((t) => t.type === 'review')).toMatchObject({ detail: 'Signs: sinus tract. Other findings: Sinus tract buccal to 36.' });

    // Reason required; then another clinician corrects it (the sinus tract was on the neighbouring tooth).
    await expect(correctReview(services.em(), a.clinician2, c.id, first.review.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0 })).rejects.toMatchObject({ status: 422, fieldErrors: { reason: expect.any(Array) } });
    const fixed = await correctReview(services.em(), a.clinician2, c.id, first.review.id, {
      reviewDate: today,
      toothStatus: 'present',
      paiScore: 2,
      lesionDiameterMm: 0,
      sinusTract: false,
      otherFindings: 'Sinus tract traced to 37.',
      reason: 'The sinus tract belongs to 37, not this tooth.',
    });
    expect(fixed.review).toMatchObject({ current: true, supersedes: first.review.id, correctionReason: 'The sinus tract belongs to 37, not this tooth.', correctedBy: { id: a.clinician2.userId }, assessor: { id: a.clinician.userId } });
    expect(fixed.review.outcome).not.toBe('disease');
    expect(fixed.currentOutcome).toBe(fixed.review.outcome);

    const list = await listReviews(services.em(), a.auditor, c.id);
    expect(list.reviews.map((r) => [r.id, r.current, r.supersededBy])).toEqual([
      [first.review.id, false, fixed.review.id],
      [fixed.review.id, true, null],
    ]);
    detail = await getCase(services.em(), a.auditor, c.id);
    expect(detail.latestOutcome).toBe(fixed.review.outcome);
    expect(detail.timeline.filter((t) => t.type === 'review').map((t) => [t.superseded ?? false, t.detail])).toEqual([
      [true, 'Superseded by a correction: The sinus tract belongs to 37, not this tooth.'],
      [false, 'No signs present. Other findings: Sinus tract traced to 37.'],
    ]);
    // The case list counts only the current version.
    const row = (await listCases(services.em(), a.auditor, {})).rows.find((r) => r.id === c.id)!;
    expect([row.reviewCount, row.currentOutcome]).toEqual([1, fixed.review.outcome]);

    const trail = await services.em().find(AuditEventSchema, { action: { $in: ['review.corrected', 'review.superseded'] } }, { orderBy: { at: 'asc' } });
    expect(trail.map((e) => [e.action, e.entityId, (e.detail as Record<string, unknown>).supersedes ?? (e.detail as Record<string, unknown>).supersededBy])).toEqual([
      ['review.corrected', fixed.review.id, first.review.id],
      ['review.superseded', first.review.id, fixed.review.id],
    ]);

    // Only the current version can be corrected; the coordinator cannot correct at all.
    await expect(correctReview(services.em(), a.clinician, c.id, first.review.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, reason: 'Again.' })).rejects.toMatchObject({ status: 409 });
    await expect(correctReview(services.em(), a.coordinator, c.id, fixed.review.id, { reason: 'No.' })).rejects.toMatchObject({ status: 403 });
  });
});
