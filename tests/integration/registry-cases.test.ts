import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema, PracticeSchema, RecallVisitSchema, ReviewSchema, TreatmentCaseSchema } from '@/entities';
import { addMonthsClamped, addDaysTo, daysBetween } from '@/lib/registry/calendar-date';
import { archiveCase, createCase, getCase, listCases, listClinicians, updateCase } from '@/lib/services/cases';
import { CASE_SORTS, CaseListQuery, caseListQuery, type CaseSort } from '@/lib/services/cases-list';
import { ConflictError, ForbiddenError, ValidationError } from '@/lib/services/errors';
import { archivePatient, createPatient, getPatient, listPatients, updatePatient } from '@/lib/services/patients';
import { createReferrer, listReferrers } from '@/lib/services/referrers';
import { todayIn } from '@/lib/services/registry-common';
import { createReview, listReviews } from '@/lib/services/reviews';
import { closeVisitAsLost, listVisits, updateVisit } from '@/lib/services/visits';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const today = todayIn('Europe/London');
const monthsAgo = (n: number) => addMonthsClamped(today, -n);

async function world() {
  const a = await makeRegistryPractice(services.em(), 'alder');
  const patient = await createPatient(services.em(), a.clinician, patientInput());
  return { a, patient };
}

describe('recall plans', () => {
  it('completing a case creates its visits from the practice policy; an open case has none until completed', async () => {
    const { a, patient } = await world();
    const completion = monthsAgo(1);
    const done = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: addDaysTo(completion, -14), completionDate: completion }));
    expect(done.visits.map((v) => [v.milestone, v.dueDate, v.status])).toEqual([
      [6, addMonthsClamped(completion, 6), 'planned'],
      [12, addMonthsClamped(completion, 12), 'planned'],
      [24, addMonthsClamped(completion, 24), 'planned'],
    ]);
    expect(done.visits[0]).toMatchObject({ windowStart: addDaysTo(addMonthsClamped(completion, 6), -30), windowEnd: addDaysTo(addMonthsClamped(completion, 6), 60) });
    expect(done.fillLengthClass).toBe('short'); // one canal 2.5 mm short
    expect(done.toothGroup).toBe('molar');
    expect(done.timeline.map((t) => t.type)).toEqual(['treatment-started', 'treatment-completed', 'visit', 'visit', 'visit']);

    const open = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { tooth: 26, startDate: monthsAgo(1), completionDate: undefined, canals: [] }));
    expect(open.visits).toEqual([]);
    expect(open.stage).toBe('in_progress');
    const completed = await updateCase(services.em(), a.clinician, open.id, {
      completionDate: today,
      canals: [{ name: 'P', workingLengthMm: 21, apicalSize: 40, fillToApexMm: 1 }],
    });
    expect(completed.plan.created).toBe(3);
    expect(completed.visits.map((v) => v.milestone)).toEqual([6, 12, 24]);
    expect(completed.fillLengthClass).toBe('within');
  });

  it('uses the practice’s own policy (e.g. an added 48-month review) and marks visits already past due as missed', async () => {
    const { a, patient } = await world();
    const em = services.em();
    const practice = await em.findOneOrFail(PracticeSchema, a.practice.id);
    practice.recallPolicy = {
      milestones: [
        { months: 6, windowBeforeDays: 30, windowAfterDays: 60 },
        { months: 12, windowBeforeDays: 60, windowAfterDays: 120 },
        { months: 48, windowBeforeDays: 90, windowAfterDays: 180 },
      ],
    };
    await em.flush();
    const completion = monthsAgo(14);
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: addDaysTo(completion, -7), completionDate: completion }));
    expect(c.visits.map((v) => [v.milestone, v.status])).toEqual([
      [6, 'missed'],
      [12, 'planned'], // due two months ago, window still open (+120 days)
      [48, 'planned'],
    ]);
    const row = await services.em().findOneOrFail(TreatmentCaseSchema, c.id);
    expect(row.nextVisitDate).toBe(addMonthsClamped(completion, 12));
  });

  it('moving the completion date moves only the visits not yet attended, and re-invites the invited', async () => {
    const { a, patient } = await world();
    const completion = monthsAgo(7);
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: addDaysTo(completion, -10), completionDate: completion }));
    const [six, twelve, twentyFour] = c.visits;
    await createReview(services.em(), a.clinician, c.id, { visitId: six!.id, reviewDate: addDaysTo(today, -3), toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0 });
    await updateVisit(services.em(), a.coordinator, twelve!.id, { status: 'invited' });

    const moved = addDaysTo(completion, 20);
    const r = await updateCase(services.em(), a.clinician, c.id, { completionDate: moved });
    expect(r.plan).toMatchObject({ moved: 2, created: 0, kept: 1, reassessedReviews: 1 });
    const after = new Map(r.visits.map((v) => [v.milestone, v]));
    expect(after.get(6)).toMatchObject({ status: 'attended', dueDate: six!.dueDate, windowEnd: six!.windowEnd });
    expect(after.get(12)).toMatchObject({ status: 'invited', dueDate: addMonthsClamped(moved, 12), reinviteNeeded: true });
    expect(after.get(24)).toMatchObject({ status: 'planned', dueDate: addMonthsClamped(moved, 24), reinviteNeeded: false });
    expect(twentyFour!.dueDate).not.toBe(after.get(24)!.dueDate);
    // The review's days since completion follow the new date.
    const review = await services.em().findOneOrFail(ReviewSchema, { case: c.id });
    expect(review.daysSinceCompletion).toBe(r.reviews[0]!.daysSinceCompletion);
    expect(r.reviews[0]!.daysSinceCompletion).toBe(daysBetween(moved, addDaysTo(today, -3)));

    // A completion date after a review is refused, and clearing it once visits are under way too.
    await expect(updateCase(services.em(), a.clinician, c.id, { completionDate: today })).rejects.toBeInstanceOf(ValidationError);
    await expect(updateCase(services.em(), a.clinician, c.id, { completionDate: '', canals: [{ name: 'MB' }] })).rejects.toBeInstanceOf(ConflictError);
  });
});

describe('the case’s recall summary', () => {
  it('follows every visit change, including plain SQL from other code (database trigger), and drives the list filters', async () => {
    const { a, patient } = await world();
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: monthsAgo(2), completionDate: monthsAgo(1) }));
    const row = async () => {
      const r = await services.em().findOneOrFail(TreatmentCaseSchema, c.id);
      return [r.nextVisitDate, r.nextVisitStatus, r.visitStatuses];
    };
    expect(await row()).toEqual([c.visits[0]!.dueDate, 'planned', ['planned']]);
    const knex = services.em().getKnex();
    await knex('recall_visit').where({ id: c.visits[0]!.id }).update({ status: 'declined' });
    expect(await row()).toEqual([c.visits[1]!.dueDate, 'planned', ['declined', 'planned']]);
    const ids = async (q: Record<string, unknown>) => (await listCases(services.em(), a.auditor, q)).rows.map((r) => r.id);
    expect(await ids({ visitStatus: 'declined' })).toEqual([c.id]);
    expect(await ids({ visitStatus: 'invited' })).toEqual([]);
    await knex('recall_visit').where({ case_id: c.id }).del();
    expect(await row()).toEqual([null, null, []]);
  });
});

describe('visits', () => {
  it('moves only along the status table: a refused move is a 409 naming the allowed ones, a bad status a 422', async () => {
    const { a, patient } = await world();
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: monthsAgo(7), completionDate: monthsAgo(6) }));
    const v = c.visits[0]!; // due today, its window begun
    let visits = await updateVisit(services.em(), a.coordinator, v.id, { status: 'invited' });
    visits = await updateVisit(services.em(), a.coordinator, v.id, { status: 'confirmed', bookedDate: addDaysTo(v.dueDate, 3) });
    expect(visits[0]).toMatchObject({ status: 'confirmed', bookedDate: addDaysTo(v.dueDate, 3) });
    // Not attended before the appointment (lib/recall transitionVisit); on the day it is.
    await expect(updateVisit(services.em(), a.coordinator, v.id, { status: 'attended' })).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/cannot be marked attended before then/) });
    await updateVisit(services.em(), a.coordinator, v.id, { bookedDate: today });
    visits = await updateVisit(services.em(), a.coordinator, v.id, { status: 'attended' });
    expect(visits[0]!.allowedNext).toEqual([]);
    const refused = updateVisit(services.em(), a.coordinator, v.id, { status: 'invited' });
    await expect(refused).rejects.toBeInstanceOf(ConflictError);
    await expect(refused).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/attended cannot become invited.*final/i) });
    await expect(updateVisit(services.em(), a.coordinator, v.id, { status: 'lost' })).rejects.toMatchObject({ status: 422 });
    await expect(updateVisit(services.em(), a.coordinator, v.id, {})).rejects.toMatchObject({ status: 422 });
    // Only the recall desk changes visits.
    await expect(updateVisit(services.em(), a.clinician, c.visits[1]!.id, { status: 'invited' })).rejects.toBeInstanceOf(ForbiddenError);
  });

  it('closing a visit as lost to follow-up closes the later ones that are not final, with the date', async () => {
    const { a, patient } = await world();
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: monthsAgo(2), completionDate: monthsAgo(1) }));
    await updateVisit(services.em(), a.coordinator, c.visits[0]!.id, { status: 'declined' });
    const visits = await closeVisitAsLost(services.em(), a.coordinator, c.visits[1]!.id, { note: 'Moved abroad, no reply' });
    expect(visits.map((v) => [v.milestone, v.status, v.lostToFollowUp])).toEqual([
      [6, 'declined', false],
      [12, 'closed', true],
      [24, 'closed', true],
    ]);
    expect(visits[1]).toMatchObject({ closedOn: today, note: 'Moved abroad, no reply' });
    const row = await services.em().findOneOrFail(TreatmentCaseSchema, c.id);
    expect([row.nextVisitDate, row.nextVisitStatus]).toEqual([null, null]);
    await expect(updateVisit(services.em(), a.coordinator, c.visits[2]!.id, { status: 'planned' })).rejects.toBeInstanceOf(ConflictError);
  });
});

describe('reviews', () => {
  it('computes the outcome from the findings, the baseline and the time since completion — never from the input', async () => {
    const { a, patient } = await world();
    const completion = monthsAgo(13);
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: addDaysTo(completion, -7), completionDate: completion, paiScore: 4 }));
    const six = c.visits.find((v) => v.milestone === 6)!;
    expect(six.status).toBe('missed'); // its window ended before the case was entered
    const healing = await createReview(services.em(), a.clinician, c.id, {
      visitId: six.id,
      reviewDate: addDaysTo(six.dueDate, 70),
      toothStatus: 'present',
      paiScore: 3,
      lesionDiameterMm: 2,
      outcome: 'healed',
    });
    expect(healing.review).toMatchObject({ outcome: 'healing', successStrict: false, successLenient: true, visitMilestone: 6 });
    expect(healing.visits.find((v) => v.id === six.id)!.status).toBe('attended'); // missed → attended
    expect(healing.caution).toMatch(/support clinical judgement/);

    const disease = await createReview(services.em(), a.clinician, c.id, {
      reviewDate: addDaysTo(today, -1),
      toothStatus: 'present',
      paiScore: 2,
      lesionDiameterMm: 0,
      sinusTract: true,
    });
    expect(disease.review).toMatchObject({ outcome: 'disease', visitId: null, successLenient: false, reasons: ['sinus tract'] });

    const extracted = await createReview(services.em(), a.clinician2, c.id, { reviewDate: today, toothStatus: 'extracted', paiScore: 5 });
    expect(extracted.review).toMatchObject({ outcome: 'tooth-extracted', paiScore: null, assessor: { id: a.clinician2.userId } });
    // The visits still open are no longer needed.
    expect(extracted.visits.map((v) => [v.milestone, v.status])).toEqual([
      [6, 'attended'],
      [12, 'cancelled'],
      [24, 'cancelled'],
    ]);
    const list = await listReviews(services.em(), a.auditor, c.id);
    expect(list.reviews.map((r) => r.outcome)).toEqual(['healing', 'disease', 'tooth-extracted']);
    expect(list.currentOutcome).toBe('tooth-extracted');

    const healed = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { tooth: 11, canals: [{ name: 'C', fillToApexMm: 1 }], startDate: monthsAgo(8), completionDate: monthsAgo(7), paiScore: 3, lesionDiameterMm: 2 }));
    const r = await createReview(services.em(), a.clinician, healed.id, { reviewDate: today, toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });
    expect(r.review).toMatchObject({ outcome: 'healed', successStrict: true });
  });

  it('refuses reviews before completion, in the future, at another case’s visit, or at a cancelled visit', async () => {
    const { a, patient } = await world();
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: monthsAgo(3), completionDate: monthsAgo(2) }));
    const other = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { tooth: 46, startDate: monthsAgo(3), completionDate: monthsAgo(2) }));
    const base = { toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0 };
    await expect(createReview(services.em(), a.clinician, c.id, { ...base, reviewDate: monthsAgo(4) })).rejects.toMatchObject({ status: 422, fieldErrors: { reviewDate: [expect.stringMatching(/before the completion/)] } });
    await expect(createReview(services.em(), a.clinician, c.id, { ...base, reviewDate: addDaysTo(today, 2) })).rejects.toMatchObject({ status: 422 });
    await expect(createReview(services.em(), a.clinician, c.id, { ...base, reviewDate: today, visitId: other.visits[0]!.id })).rejects.toMatchObject({ status: 422, fieldErrors: { visitId: expect.any(Array) } });
    await updateVisit(services.em(), a.coordinator, c.visits[0]!.id, { status: 'cancelled' });
    await expect(createReview(services.em(), a.clinician, c.id, { ...base, reviewDate: today, visitId: c.visits[0]!.id })).rejects.toBeInstanceOf(ConflictError);
    await expect(createReview(services.em(), a.coordinator, c.id, { ...base, reviewDate: today })).rejects.toBeInstanceOf(ForbiddenError);
  });
});

describe('patients, cases and the list', () => {
  it('validates cases at the edge: references of this practice, dates not in the future, a clinician as operator', async () => {
    const { a, patient } = await world();
    const bad = (change: Record<string, unknown>) => createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, change));
    await expect(bad({ tooth: 19 })).rejects.toMatchObject({ status: 422, fieldErrors: { tooth: expect.any(Array) } });
    await expect(bad({ operatorId: a.coordinator.userId })).rejects.toMatchObject({ status: 422, fieldErrors: { operatorId: ['Choose a clinician of this practice.'] } });
    await expect(bad({ patientId: '00000000-0000-4000-8000-000000000000' })).rejects.toMatchObject({ status: 422, fieldErrors: { patientId: expect.any(Array) } });
    await expect(bad({ completionDate: addDaysTo(today, 1) })).rejects.toMatchObject({ status: 422, fieldErrors: { completionDate: expect.any(Array) } });
    await expect(createCase(services.em(), a.coordinator, caseInput(patient.id, a.clinician.userId))).rejects.toBeInstanceOf(ForbiddenError);
    // Changing the kind to apical surgery drops the canals and the fill.
    const c = await bad({});
    const surgery = await updateCase(services.em(), a.clinician, c.id, { kind: 'apical_surgery', pulpalDiagnosis: 'previously_treated', rootEndFilling: 'calcium_silicate' });
    expect([surgery.canals, surgery.fillLengthClass, surgery.fields.sections.includes('canals')]).toEqual([[], null, false]);
  });

  it('lists cases with server-side filters, search, sorts and paging; the tooth in the practice’s notation', async () => {
    const { a, patient } = await world();
    const other = await createPatient(services.em(), a.coordinator, patientInput({ registryNumber: 'Q-77', givenName: 'Milo', familyName: 'Quarrender' }));
    const ref = await createReferrer(services.em(), a.coordinator, { name: 'Dr Ida Fenwick', practiceName: 'Harbour Dental' });
    const mk = (p: string, operator: string, change: Record<string, unknown>) => createCase(services.em(), a.clinician, caseInput(p, operator, change));
    const c1 = await mk(patient.id, a.clinician.userId, { tooth: 36, startDate: monthsAgo(30), completionDate: monthsAgo(29), referrerId: ref.id });
    const c2 = await mk(patient.id, a.clinician2.userId, { tooth: 11, canals: [{ name: 'C', fillToApexMm: -0.5 }], complications: ['material_beyond_apex'], startDate: monthsAgo(3), completionDate: monthsAgo(2) });
    const c3 = await mk(other.id, a.clinician.userId, { tooth: 24, kind: 'nonsurgical_retreatment', pulpalDiagnosis: 'previously_treated', canals: [{ name: 'B' }, { name: 'P' }], startDate: monthsAgo(1), completionDate: undefined });
    await updateVisit(services.em(), a.coordinator, c2.visits[0]!.id, { status: 'invited' });

    const ids = async (q: Record<string, unknown>) => (await listCases(services.em(), a.auditor, q)).rows.map((r) => r.id);
    expect(await ids({})).toEqual([c3.id, c2.id, c1.id]); // newest first, the case in progress on top
    expect(await ids({ operator: a.clinician2.userId })).toEqual([c2.id]);
    expect(await ids({ kind: 'nonsurgical_retreatment' })).toEqual([c3.id]);
    expect(await ids({ toothGroup: 'incisor,premolar' })).toEqual([c3.id, c2.id]);
    expect(await ids({ fillLength: 'beyond' })).toEqual([c2.id]);
    expect(await ids({ visitStatus: 'invited' })).toEqual([c2.id]);
    expect(await ids({ visitStatus: 'missed' })).toEqual([c1.id]);
    expect(await ids({ dueFrom: today, dueTo: addMonthsClamped(today, 5) })).toEqual([c2.id]);
    expect(await ids({ completedFrom: monthsAgo(12), completedTo: today })).toEqual([c2.id]);
    expect(await ids({ stage: 'in_progress' })).toEqual([c3.id]);
    expect(await ids({ q: 'quarr' })).toEqual([c3.id]);
    expect(await ids({ q: 't-0001 wren' })).toEqual([c2.id, c1.id]);
    expect(await ids({ sort: 'tooth', dir: 'asc' })).toEqual([c2.id, c3.id, c1.id]);
    expect(await ids({ sort: 'patient', dir: 'asc' })).toEqual([...[c1.id, c2.id].sort(), c3.id]); // Ashdown ×2 (by id), Quarrender
    const page2 = await listCases(services.em(), a.auditor, { pageSize: 2, page: 2 });
    expect([page2.total, page2.rows.map((r) => r.id)]).toEqual([3, [c1.id]]);
    await expect(listCases(services.em(), a.auditor, { kind: 'root_canal' })).rejects.toMatchObject({ status: 422, fieldErrors: { 'kind.0': [expect.stringMatching(/kind is one of/)] } });
    await expect(listCases(services.em(), a.auditor, { sort: 'secret' })).rejects.toMatchObject({ status: 422 });

    const row = (await listCases(services.em(), a.auditor, { patient: patient.id })).rows.find((r) => r.id === c2.id)!;
    expect(row).toMatchObject({ tooth: '11', toothGroup: 'incisor', fillLengthClass: 'beyond', nextVisit: { status: 'invited' }, patient: { registryNumber: 'T-0001', name: 'Ashdown, Wren' } });
    const em = services.em();
    (await em.findOneOrFail(PracticeSchema, a.practice.id)).toothNotation = 'universal';
    await em.flush();
    const universal = await listCases(services.em(), a.auditor, {});
    expect(universal.toothLabel).toBe('Tooth (Universal)');
    expect(universal.rows.map((r) => r.tooth)).toEqual(['12', '8', '19']); // FDI 24, 11, 36
    expect((await getCase(services.em(), a.auditor, c1.id)).tooth).toBe('19');

    // Archived cases leave the list unless asked for.
    await archiveCase(services.em(), a.clinician, c1.id);
    expect(await ids({})).toEqual([c3.id, c2.id]);
    expect(await ids({ archived: 'only' })).toEqual([c1.id]);
    expect((await listClinicians(services.em(), a.coordinator)).map((u) => u.email).sort()).toEqual(['cal@alder.test', 'cleo@alder.test']);
    expect((await listReferrers(services.em(), a.clinician, { q: 'harbour' })).rows.map((r) => r.name)).toEqual(['Dr Ida Fenwick']);
  });

  it('a filter on the visits’ due dates (read once, then counted and sorted) gives the same total and pages as a count and an ordered query, in every sort', async () => {
    const { a, patient } = await world();
    const other = await createPatient(services.em(), a.coordinator, patientInput({ registryNumber: 'Q-78', givenName: 'Ada', familyName: 'Brackley' }));
    const made: Awaited<ReturnType<typeof createCase>>[] = [];
    for (let i = 0; i < 7; i++) {
      const completion = monthsAgo(3 + 2 * i);
      made.push(
        await createCase(
          services.em(),
          a.clinician,
          caseInput(i % 2 ? other.id : patient.id, i % 3 ? a.clinician.userId : a.clinician2.userId, { tooth: [11, 36, 24, 46, 21, 15, 37][i], startDate: addDaysTo(completion, -10), completionDate: completion }),
        ),
      );
    }
    await updateVisit(services.em(), a.coordinator, made[2]!.visits[0]!.id, { status: 'invited' });
    const f = { dueFrom: monthsAgo(4), dueTo: today }; // the 6-month visits of cases 2 and 3, the 12-month ones of cases 5 and 6
    // The reference: the filtered query (caseListQuery) counted, and ordered and paged on its own.
    const knex = services.em().getKnex();
    const reference = async (sort: CaseSort, dir: 'asc' | 'desc', page: number) => {
      const q = CaseListQuery.parse({ ...f, sort, dir, page, pageSize: 3 });
      const base = caseListQuery(knex, a.practice.id, q).join('patient as p', 'p.id', 'c.patient_id').join('app_user as u', 'u.id', 'c.operator_id');
      const cols = { completionDate: ['c.completion_date'], startDate: ['c.start_date'], tooth: ['c.tooth'], kind: ['c.kind', 'c.completion_date'], patient: ['p.family_name', 'p.given_name'], registryNumber: ['p.registry_number'], operator: ['u.name'], nextVisit: ['c.next_visit_date'], createdAt: ['c.created_at'] }[sort];
      const [n] = (await base.clone().count('* as n')) as { n: string }[];
      const rows = (await base.clone().select('c.id').orderBy([...cols, 'c.id'].map((column) => ({ column, order: dir }))).limit(3).offset((page - 1) * 3)) as { id: string }[];
      return { total: Number(n!.n), ids: rows.map((r) => r.id) };
    };
    let compared = 0;
    for (const sort of CASE_SORTS) {
      for (const dir of ['asc', 'desc'] as const) {
        for (const page of [1, 2, 3, 4]) {
          const got = await listCases(services.em(), a.auditor, { ...f, sort, dir, page, pageSize: 3 });
          expect({ total: got.total, ids: got.rows.map((r) => r.id) }, `${sort} ${dir} page ${page}`).toEqual(await reference(sort, dir, page));
          compared++;
        }
      }
    }
    expect(compared).toBe(CASE_SORTS.length * 8);
    // The filter itself: the visits due in the range, in whichever status; with a status, only those.
    const all = await listCases(services.em(), a.auditor, { ...f, pageSize: 50 });
    expect(all.rows.map((r) => r.id).sort()).toEqual([2, 3, 5, 6].map((i) => made[i]!.id).sort());
    const invited = await listCases(services.em(), a.auditor, { ...f, visitStatus: 'invited' });
    expect([invited.total, invited.rows.map((r) => r.id)]).toEqual([1, [made[2]!.id]]);
  });

  it('the list’s totals are kept per case-list version and stay exact after every kind of change, by whichever process', async () => {
    const { a, patient } = await world();
    const mk = (change: Record<string, unknown> = {}) => createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, change));
    const c1 = await mk({ tooth: 36 });
    const c2 = await mk({ tooth: 11, canals: [{ name: 'C' }] });
    const total = async (q: Record<string, unknown>) => (await listCases(services.em(), a.auditor, q)).total;
    const knex = services.em().getKnex();
    const version = async () => String((await knex('case_list_version').where('practice_id', a.practice.id).first('version'))?.version);
    expect([await total({}), await total({ visitStatus: 'invited' }), await total({ q: 'wren' }), await total({ q: 'wrenna' })]).toEqual([2, 0, 2, 0]);

    // A review changes no total and leaves the version as it was.
    const before = await version();
    await createReview(services.em(), a.clinician, c1.id, { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0 });
    expect(await version()).toBe(before);
    expect(await total({})).toBe(2);

    // Plain SQL, as another process (the worker) writes: a visit invited, a patient renamed.
    await knex('recall_visit').where('id', c2.visits[0]!.id).update({ status: 'invited' });
    expect(await version()).not.toBe(before);
    expect(await total({ visitStatus: 'invited' })).toBe(1);
    await knex('patient').where('id', patient.id).update({ given_name: 'Wrenna' });
    expect([await total({ q: 'wrenna' }), await total({ q: 'wren' })]).toEqual([2, 2]);
    await knex('patient').where('id', patient.id).update({ given_name: 'Bea', family_name: 'Lowther' });
    expect(await total({ q: 'wren' })).toBe(0);

    // The services' own writes: archive, create.
    await archiveCase(services.em(), a.clinician, c1.id);
    expect([await total({}), await total({ archived: 'only' })]).toEqual([1, 1]);
    await mk({ tooth: 24, canals: [{ name: 'B' }, { name: 'P' }] });
    expect([await total({}), await total({ pageSize: 1, page: 2 })]).toEqual([2, 2]);
  });

  it('patients: search by registry number or name, consents recorded by whoever changed them, archive', async () => {
    const { a, patient } = await world();
    await createPatient(services.em(), a.coordinator, patientInput({ registryNumber: 'Q-77', givenName: 'Milo', familyName: 'Quarrender', recallChannel: 'phone', phone: '01632 960123', email: '' }));
    const names = async (q: Record<string, unknown>) => (await listPatients(services.em(), a.coordinator, q)).rows.map((r) => r.registryNumber);
    expect(await names({})).toEqual(['T-0001', 'Q-77']); // Ashdown, Quarrender
    expect(await names({ q: 'q-7' })).toEqual(['Q-77']);
    expect(await names({ q: 'ASHD' })).toEqual(['T-0001']);
    expect(await names({ q: '100%' })).toEqual([]);
    await expect(createPatient(services.em(), a.coordinator, patientInput())).rejects.toBeInstanceOf(ConflictError);
    await expect(createPatient(services.em(), a.coordinator, patientInput({ registryNumber: 'X-1', email: '' }))).rejects.toMatchObject({
      status: 422,
      fieldErrors: { email: ['Recalls by e-mail need an e-mail address.'] },
    });
    await expect(updatePatient(services.em(), a.coordinator, patient.id, { email: '' })).rejects.toMatchObject({ status: 422 });
    const changed = await updatePatient(services.em(), a.coordinator, patient.id, { researchUse: false, phone: '01632 960999' });
    expect(changed).toMatchObject({ researchUse: false, phone: '01632 960999', email: patient.email, consentRecordedBy: { id: a.coordinator.userId } });
    await archivePatient(services.em(), a.coordinator, patient.id);
    expect(await names({})).toEqual(['Q-77']);
    expect(await names({ archived: 'include' })).toEqual(['T-0001', 'Q-77']);
    expect((await updatePatient(services.em(), a.coordinator, patient.id, { archived: false })).archived).toBe(false);
    await expect(listPatients(services.em(), a.researcher, {})).rejects.toBeInstanceOf(ForbiddenError);
    await expect(getPatient(services.em(), a.admin, patient.id)).rejects.toBeInstanceOf(ForbiddenError);
  });

  it('writes an audit event for every read and change of patient data, naming no patient details', async () => {
    const { a, patient } = await world();
    const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { startDate: monthsAgo(2), completionDate: monthsAgo(1) }));
    await getPatient(services.em(), a.auditor, patient.id);
    await listPatients(services.em(), a.auditor, { q: 'ashdown' });
    await listCases(services.em(), a.auditor, {});
    await getCase(services.em(), a.auditor, c.id);
    await listVisits(services.em(), a.auditor, c.id);
    await listReviews(services.em(), a.auditor, c.id);
    await updateVisit(services.em(), a.coordinator, c.visits[0]!.id, { status: 'invited' });
    await updateCase(services.em(), a.clinician, c.id, { sealerClass: 'calcium_silicate' });
    await updatePatient(services.em(), a.clinician, patient.id, { phone: '01632 960111' });
    const events = await services.em().find(AuditEventSchema, { practiceId: a.practice.id }, { orderBy: { at: 'asc' } });
    expect(events.map((e) => [e.action, e.actorId])).toEqual([
      ['patient.created', a.clinician.userId],
      ['case.created', a.clinician.userId],
      ['patient.read', a.auditor.userId],
      ['patient.list', a.auditor.userId],
      ['case.list', a.auditor.userId],
      ['case.read', a.auditor.userId],
      ['visit.list', a.auditor.userId],
      ['review.list', a.auditor.userId],
      ['visit.updated', a.coordinator.userId],
      ['case.updated', a.clinician.userId],
      ['patient.updated', a.clinician.userId],
    ]);
    const list = events.find((e) => e.action === 'case.list')!;
    expect(list.detail).toMatchObject({ ids: [c.id], filters: [], searched: false });
    expect(events.find((e) => e.action === 'case.updated')!.detail).toMatchObject({ fields: ['sealerClass'] });
    expect(events.find((e) => e.action === 'patient.updated')!.detail).toEqual({ fields: ['phone'] });
    const text = JSON.stringify(events.map((e) => e.detail));
    expect(text).not.toMatch(/ashdown|wren|01632/i);
    expect(events.every((e) => e.ip === '127.0.0.9')).toBe(true);
    expect(await services.em().count(RecallVisitSchema, { case: c.id })).toBe(3);
  });
});
