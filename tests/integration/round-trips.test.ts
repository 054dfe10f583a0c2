import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import type { EntityManager } from '@mikro-orm/postgresql';
import { AuditEventSchema, RecallVisitSchema, ReviewSchema, TreatmentCaseSchema } from '@/entities';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { resolveSession } from '@/lib/services/auth';
import { archiveCase, createCase, getCase } from '@/lib/services/cases';
import { readCase } from '@/lib/services/case-page';
import { caseValues } from '@/lib/services/case-columns';
import { createReferrer } from '@/lib/services/referrers';
import { createPatient } from '@/lib/services/patients';
import { updatePracticeSettings } from '@/lib/services/practice-settings';
import { recallSettings } from '@/lib/services/recall-common';
import { updateReminderPolicy } from '@/lib/services/recall-policy';
import { insertWithChanges, practiceSettings, readWithSession, todayIn } from '@/lib/services/registry-common';
import { correctReview, createReview } from '@/lib/services/reviews';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

/**
 * Statements a request sends to PostgreSQL (issue 15, load): each round trip costs the web server
 * CPU (the ORM, the driver, a socket write) as well as PostgreSQL. The case page and a review save
 * are the load's busiest; these pin what they read, and that the practice's settings come with the
 * session's own read.
 */
const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const today = todayIn('Europe/London');
const origin = { ip: '127.0.0.1', userAgent: 'vitest' };

/** The statements `fn` sends, as the request does: on one EntityManager that the session's read prepared. */
async function statements(a: Awaited<ReturnType<typeof makeRegistryPractice>>, userId: string, fn: (em: EntityManager) => Promise<unknown>) {
  const em = services.em();
  const s = await resolveSession(em, userId, origin, { sessionVersion: 0, practiceId: a.practice.id });
  if (s.kind !== 'actor') throw new Error('no actor');
  readWithSession(em, s.practice);
  const client = em.getKnex().client as { on: (e: string, f: (q: { sql: string }) => void) => void; removeListener: (e: string, f: (q: { sql: string }) => void) => void };
  const seen: string[] = [];
  const on = (q: { sql: string }) => seen.push(q.sql.replace(/\s+/g, ' ').slice(0, 60));
  client.on('query', on);
  try {
    await fn(em);
  } finally {
    client.removeListener('query', on);
  }
  return seen;
}

async function world() {
  const a = await makeRegistryPractice(services.em(), 'rowan');
  const patient = await createPatient(services.em(), a.clinician, patientInput());
  const completion = addMonthsClamped(today, -7);
  const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: addDaysTo(completion, -10), completionDate: completion }));
  await createReview(services.em(), a.clinician, c.id, { visitId: c.visits[0]!.id, reviewDate: addDaysTo(today, -3), toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0 });
  return { a, c };
}

describe('round trips of the busiest requests', () => {
  it('the session’s read brings the chosen practice’s settings; practiceSettings and recallSettings then read nothing, and a change of them is seen in the same request', async () => {
    const { a } = await world();
    const fresh = await practiceSettings(services.em(), a.practice.id);
    let got: unknown;
    expect(await statements(a, a.admin.userId, async (em) => (got = await practiceSettings(em, a.practice.id)))).toEqual([]);
    expect(got).toEqual(fresh);
    // Another practice's settings are read as before.
    const other = await makeRegistryPractice(services.em(), 'hazel');
    expect(await statements(a, a.admin.userId, (em) => practiceSettings(em, other.practice.id))).toHaveLength(1);
    // A change in the request: its later reads see it.
    await statements(a, a.admin.userId, async (em) => {
      await updatePracticeSettings(em, a.admin, { toothNotation: 'universal', minObservationDays: 500 });
      got = await practiceSettings(em, a.practice.id);
    });
    expect(got).toMatchObject({ toothNotation: 'universal', minObservationDays: 500 });

    // The desk's settings (name, time zone, notation, reminder policy) too; a new policy is seen at once.
    const desk = await recallSettings(services.em(), a.practice.id);
    expect(await statements(a, a.coordinator.userId, async (em) => (got = await recallSettings(em, a.practice.id)))).toEqual([]);
    expect(got).toEqual(desk);
    await statements(a, a.coordinator.userId, async (em) => {
      await updateReminderPolicy(em, a.coordinator, { ...desk.reminderPolicy, quietHours: { start: '20:00', end: '09:00' } });
      got = await recallSettings(em, a.practice.id);
    });
    expect((got as typeof desk).reminderPolicy).toMatchObject({ quietHours: { start: '20:00', end: '09:00' } });
  });

  it('the case page: the case with its patient, clinician and referrer in one read, the reviews’ milestones from the visits read anyway', async () => {
    const { a, c } = await world();
    let page: Awaited<ReturnType<typeof getCase>> | undefined;
    const seen = await statements(a, a.clinician.userId, async (em) => (page = await getCase(em, a.clinician, c.id)));
    // case (+ patient, clinician, referrer), linked cases, visits, reviews (+ assessors' names), the audit event
    expect(seen, seen.join('\n')).toHaveLength(5);
    expect(page!.reviews.map((r) => [r.visitMilestone, r.assessor.name])).toEqual([[6, 'cal']]);
    expect([page!.patient.name, page!.operator.name, page!.referrer]).toEqual(['Ashdown, Wren', 'cal', null]);
  });

  it('the case page’s plain read gives the case as the ORM reads it: every field the page and its form show, the patient, clinician and referrer', async () => {
    const { a, c: first } = await world();
    const referrer = await createReferrer(services.em(), a.clinician, { name: 'Dr Ilex Marsh', practiceName: 'Fernbank Dental', email: 'ilex@fernbank.invalid' });
    const patientId = (await getCase(services.em(), a.clinician, first.id)).patient.id;
    const completion = addMonthsClamped(today, -2);
    const c = await createCase(
      services.em(),
      a.clinician,
      caseInput(patientId, a.clinician.userId, {
        kind: 'nonsurgical_retreatment',
        previousCaseId: first.id,
        referrerId: referrer.id,
        startDate: addDaysTo(completion, -14),
        completionDate: completion,
        pulpalDiagnosis: 'previously_treated',
        lesionDiameterMm: 2.5,
        preopSymptoms: ['spontaneous_pain'],
        sinusTract: true,
        probingDepthMm: 4,
        apicalPatency: false,
        complications: ['ledge'],
        fillDensity: 'voids',
        definitiveRestoration: 'crown',
        definitiveRestorationDate: addDaysTo(completion, 20),
      }),
    );
    await archiveCase(services.em(), a.clinician, c.id);
    const stored = await services.em().findOneOrFail(TreatmentCaseSchema, c.id, { populate: ['patient', 'operator', 'referrer'] });
    const read = (await readCase(services.em(), a.practice.id, c.id))!;
    // the form's values (every input field, the references' ids), then the stored-only ones
    expect(caseValues(read.c)).toEqual(caseValues(stored));
    expect(caseValues(read.c)).toMatchObject({ referrerId: referrer.id, previousCaseId: first.id, lesionDiameterMm: 2.5, definitiveRestorationDate: addDaysTo(completion, 20) });
    const pick = (x: typeof read.c) => [x.id, x.practice.id, x.toothGroup, x.toothArch, x.fillLengthClass, x.source, x.archivedAt?.toISOString(), x.createdAt.toISOString(), x.updatedAt.toISOString()];
    expect(pick(read.c)).toEqual(pick(stored));
    expect(read.c.archivedAt).toBeInstanceOf(Date);
    const p = stored.patient.getEntity();
    expect(read.patient).toEqual({ id: p.id, registryNumber: p.registryNumber, givenName: p.givenName, familyName: p.familyName, dateOfBirth: p.dateOfBirth, archivedAt: p.archivedAt ?? null });
    expect(read.operator).toEqual({ id: a.clinician.userId, name: stored.operator.getEntity().name ?? null, email: stored.operator.getEntity().email });
    expect(read.referrer).toEqual({ id: referrer.id, name: 'Dr Ilex Marsh', practiceName: 'Fernbank Dental', email: 'ilex@fernbank.invalid', archivedAt: null });
    // a case without a referrer or an earlier case; another practice's case is not found
    const plain = (await readCase(services.em(), a.practice.id, first.id))!;
    expect([plain.referrer, plain.c.referrer, plain.c.previousCase, plain.c.completionDate]).toEqual([null, null, null, first.completionDate]);
    const other = await makeRegistryPractice(services.em(), 'hazel');
    expect(await readCase(services.em(), other.practice.id, c.id)).toBeNull();
  });

  it('a review save: the review and its audit event in one statement; a correction too', async () => {
    const { a, c } = await world();
    let saved: Awaited<ReturnType<typeof createReview>> | undefined;
    const seen = await statements(a, a.clinician.userId, async (em) => {
      saved = await createReview(em, a.clinician, c.id, { reviewDate: today, toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });
    });
    // side by side: the case, the assessor's membership, the visits, the reviews (+ their people's names); then the review
    // and its event in one statement (nothing else changed: no transaction needed) — and nothing after the write (the
    // answer's reviews are those read before, with this one)
    expect(seen, seen.join('\n')).toHaveLength(5);
    expect(seen.filter((s) => /^begin|^commit/i.test(s))).toHaveLength(0);
    expect(seen[4]).toMatch(/^with "saved_review" as \(insert into "review"/);
    const events = await services.em().find(AuditEventSchema, { action: 'review.created', entityId: saved!.review.id });
    expect(events.map((e) => [e.actorId, e.detail])).toEqual([[a.clinician.userId, { caseId: c.id, visitId: null, outcome: saved!.review.outcome, cancelledVisits: [] }]]);
    expect(saved!.review).toMatchObject({ visitMilestone: null, paiScore: 1 });

    const corrected = await correctReview(services.em(), a.clinician, c.id, saved!.review.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, reason: 'Read again.' });
    const trail = await services.em().find(AuditEventSchema, { action: { $in: ['review.corrected', 'review.superseded'] } }, { orderBy: { action: 'asc' } });
    expect(trail.map((e) => [e.action, e.entityId])).toEqual([
      ['review.corrected', corrected.review.id],
      ['review.superseded', saved!.review.id],
    ]);
    expect((await services.em().findOneOrFail(ReviewSchema, saved!.review.id)).supersededBy?.id).toBe(corrected.review.id);
    // both versions as the case page shows them: the names joined into the one read of the reviews
    const shown = (await getCase(services.em(), a.clinician, c.id)).reviews.filter((r) => [saved!.review.id, corrected.review.id].includes(r.id));
    expect(shown.map((r) => [r.id, r.current, r.supersededBy, r.supersedes, r.correctedBy?.name ?? null, r.assessor.name, r.correctionReason])).toEqual([
      [saved!.review.id, false, corrected.review.id, null, null, 'cal', null],
      [corrected.review.id, true, null, saved!.review.id, 'cal', 'cal', 'Read again.'],
    ]);
    expect(shown[0]).toMatchObject({ reviewDate: today, paiScore: 1, lesionDiameterMm: 0, signs: {}, eventDate: null, reasons: expect.any(Array), supersededAt: expect.stringMatching(/^\d{4}-\d\d-\d\dT/) });
    expect(shown[0]!.reasons.length).toBeGreaterThan(0);
  });

  it('a save’s rows and the request’s other changes are written together or not at all (insertWithChanges)', async () => {
    const { a, c } = await world();
    const eventRow = (id: string) => ({ id, at: new Date(), practice_id: a.practice.id, action: 'test.saved', entity_type: 'case', entity_id: c.id });
    const ids = () => [crypto.randomUUID(), crypto.randomUUID()] as const;
    const stored = async (id: string) => (await services.em().getKnex()('audit_event').where({ id }).count({ n: '*' }))[0]!.n;

    // nothing else changed: the one statement alone, no transaction
    const [e1] = ids();
    let seen = await statements(a, a.clinician.userId, (em) => insertWithChanges(em, (k) => k('audit_event').insert(eventRow(e1))));
    expect(seen).toEqual([expect.stringMatching(/^insert into "audit_event"/)]);
    expect(Number(await stored(e1))).toBe(1);

    // an entity changed too: the rows first, then the flush, in one transaction
    const [e2] = ids();
    seen = await statements(a, a.clinician.userId, async (em) => {
      const visit = await em.findOneOrFail(RecallVisitSchema, { case: c.id, milestone: 12 });
      visit.note = 'Prefers mornings.';
      await insertWithChanges(em, (k) => k('audit_event').insert(eventRow(e2)));
    });
    expect(seen.map((q) => q.split(' ')[0]!.toLowerCase().replace(';', ''))).toEqual(['select', 'begin', 'insert', 'update', 'commit']);
    expect(Number(await stored(e2))).toBe(1);
    expect((await services.em().findOneOrFail(RecallVisitSchema, { case: c.id, milestone: 12 })).note).toBe('Prefers mornings.');

    // the flush fails (a value the table refuses): the rows are not written either
    const [e3] = ids();
    await expect(
      statements(a, a.clinician.userId, async (em) => {
        const visit = await em.findOneOrFail(RecallVisitSchema, { case: c.id, milestone: 12 });
        (visit as { status: string }).status = 'no-such-status';
        await insertWithChanges(em, (k) => k('audit_event').insert(eventRow(e3)));
      }),
    ).rejects.toThrow();
    expect(Number(await stored(e3))).toBe(0);
    expect((await services.em().findOneOrFail(RecallVisitSchema, { case: c.id, milestone: 12 })).status).toBe('planned');
  });
});
