import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { OutcomeCase } from '@/lib/outcomes';
import { orderWorklist, worklistEntries } from '@/lib/outcomes/worklist';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import type { RecordedReview } from '@/lib/scoring';
import { createCase } from '@/lib/services/cases';
import { csvDownload } from '@/lib/http';
import { caseDecisions, outcomesWorklist, recordDecision, worklistCsv, worklistCsvStream } from '@/lib/services/outcomes-worklist';
import { createPatient } from '@/lib/services/patients';
import { todayIn } from '@/lib/services/registry-common';
import { correctReview, createReview } from '@/lib/services/reviews';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { completedOn, outcomeCase, review } from '../support/outcome-cases';

/**
 * Issue 12, item 7: the non-healing worklist equals the rule (lib/outcomes/worklist.ts, the ESE
 * 2006 four-year rule over lib/scoring's outcomes — sources in tests/unit/outcomes/worklist.test.ts)
 * applied directly to the rows THIS TEST defines, not to the service's query; then recording each
 * next step, the linked case, who may record, bad input and the audit trail.
 */
const services = await openServices();
afterAll(() => services.close());

const today = todayIn('Europe/London');

interface Fixture {
  key: string;
  who: 'cal' | 'cleo';
  monthsBack: number;
  pai: number;
  reviews: { day: number; status: RecordedReview['toothStatus']; pai?: number; signs?: Record<string, boolean> }[];
  /** Corrected: the first review's PAI is corrected to this (the superseded version must not count). */
  correctedTo?: number;
  /** A later, completed retreatment of the tooth is linked to the case. */
  followed?: boolean;
  /** What the rule should say, written by hand (the test also applies the rule itself). */
  listed: boolean;
}

const FIXTURES: Fixture[] = [
  { key: 'disease', who: 'cal', monthsBack: 30, pai: 4, reviews: [{ day: 365, status: 'present', pai: 5 }], listed: true },
  { key: 'healing5y', who: 'cal', monthsBack: 60, pai: 4, reviews: [{ day: 400, status: 'present', pai: 3 }], listed: true },
  { key: 'uncertain5y', who: 'cleo', monthsBack: 60, pai: 4, reviews: [{ day: 200, status: 'present', pai: 4 }], listed: true },
  { key: 'healing2y', who: 'cleo', monthsBack: 30, pai: 4, reviews: [{ day: 400, status: 'present', pai: 3 }], listed: false },
  { key: 'retreated', who: 'cal', monthsBack: 60, pai: 4, reviews: [{ day: 365, status: 'present', pai: 5 }, { day: 700, status: 'retreated' }], listed: false },
  { key: 'healed', who: 'cal', monthsBack: 30, pai: 4, reviews: [{ day: 365, status: 'present', pai: 1 }], listed: false },
  { key: 'sinus', who: 'cleo', monthsBack: 30, pai: 3, reviews: [{ day: 380, status: 'present', pai: 2, signs: { sinusTract: true } }], listed: true },
  { key: 'unreviewed', who: 'cal', monthsBack: 60, pai: 4, reviews: [], listed: false },
  { key: 'followed', who: 'cal', monthsBack: 40, pai: 4, reviews: [{ day: 365, status: 'present', pai: 5 }], followed: true, listed: false },
  { key: 'corrected', who: 'cal', monthsBack: 30, pai: 4, reviews: [{ day: 365, status: 'present', pai: 5 }], correctedTo: 1, listed: false },
  { key: 'young', who: 'cal', monthsBack: 16, pai: 4, reviews: [{ day: 365, status: 'present', pai: 5 }], listed: true },
];

let world: Awaited<ReturnType<typeof makeRegistryPractice>>;
let other: Awaited<ReturnType<typeof makeRegistryPractice>>;
const ids = new Map<string, string>();
const completion = new Map<string, string>();
let otherCaseId = '';

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  world = await makeRegistryPractice(services.em(), 'worklist');
  other = await makeRegistryPractice(services.em(), 'elsewhere');
  let n = 0;
  for (const f of FIXTURES) {
    const operator = f.who === 'cal' ? world.clinician : world.clinician2;
    const patient = await createPatient(services.em(), world.clinician, patientInput({ registryNumber: `W-${++n}`, email: `w${n}@patients.test.invalid` }));
    const done = addMonthsClamped(today, -f.monthsBack);
    completion.set(f.key, done);
    const c = await createCase(services.em(), world.clinician, caseInput(patient.id, operator.userId, { ...completedOn(done), paiScore: f.pai, lesionDiameterMm: f.pai >= 3 ? 3 : 0 }));
    ids.set(f.key, c.id);
    for (const r of f.reviews) {
      const made = await createReview(services.em(), operator, c.id, {
        reviewDate: addDaysTo(done, r.day),
        toothStatus: r.status,
        ...(r.status === 'present' ? { paiScore: r.pai, lesionDiameterMm: r.pai! >= 3 ? 2 : 0, ...r.signs } : {}),
      });
      if (f.correctedTo) {
        await correctReview(services.em(), operator, c.id, made.review.id, { reviewDate: addDaysTo(done, r.day), toothStatus: 'present', paiScore: f.correctedTo, lesionDiameterMm: 0, reason: 'PAI read on the wrong film' });
      }
    }
    if (f.followed) {
      await createCase(
        services.em(),
        world.clinician,
        caseInput(patient.id, operator.userId, { kind: 'nonsurgical_retreatment', pulpalDiagnosis: 'previously_treated', previousCaseId: c.id, startDate: addDaysTo(done, 500), completionDate: addDaysTo(done, 510) }),
      );
    }
  }
  const op = await createPatient(services.em(), other.clinician, patientInput({ registryNumber: 'X-1' }));
  const oc = await createCase(services.em(), other.clinician, caseInput(op.id, other.clinician.userId, completedOn(addMonthsClamped(today, -30))));
  await createReview(services.em(), other.clinician, oc.id, { reviewDate: addDaysTo(addMonthsClamped(today, -30), 365), toothStatus: 'present', paiScore: 5, lesionDiameterMm: 4 });
  otherCaseId = oc.id;
});

/** The fixture as the rule's input, built from the definitions above (not from the database). */
function fixtureRows(): OutcomeCase[] {
  const rows: OutcomeCase[] = FIXTURES.map((f) =>
    outcomeCase({
      id: ids.get(f.key)!,
      patientId: f.key,
      operatorId: f.who === 'cal' ? world.clinician.userId : world.clinician2.userId,
      completionDate: completion.get(f.key)!,
      baselinePai: f.pai,
      lesionDiameterMm: 3,
      fillLengthClass: null,
      reviews: f.reviews.map((r) => review(r.day, r.status, { paiScore: f.correctedTo ?? r.pai ?? null, signs: r.signs ?? {}, from: completion.get(f.key)! })),
    }),
  );
  for (const f of FIXTURES.filter((x) => x.followed)) rows.push({ ...rows[0]!, id: `later-${f.key}`, previousCaseId: ids.get(f.key)!, reviews: [] });
  return rows;
}

describe('the worklist equals the rule on the fixture rows', () => {
  it('the lead sees the practice: same cases, same order, as orderWorklist(worklistEntries(fixture)) — and as written by hand', async () => {
    const r = await outcomesWorklist(services.em(), world.auditor, {});
    const rows = fixtureRows();
    const expected = orderWorklist(worklistEntries(rows, rows, today, 365), () => null, today);
    expect(r.rows.map((x) => x.caseId)).toEqual(expected.map((e) => e.caseId));
    expect(r.rows.map((x) => [x.reason, x.latestReviewDate, x.symptomatic])).toEqual(expected.map((e) => [e.reason, e.latestReviewDate, e.symptomatic]));
    const byHand = FIXTURES.filter((f) => f.listed).map((f) => ids.get(f.key));
    expect(new Set(r.rows.map((x) => x.caseId))).toEqual(new Set(byHand));
    // symptomatic disease first (the sinus tract); the two past-four-years cases last
    expect(r.rows[0]!.caseId).toBe(ids.get('sinus'));
    expect(r.rows.slice(-2).map((x) => x.reason).sort()).toEqual(['healing_past_four_years', 'uncertain_past_four_years']);
    const d = r.rows.find((x) => x.caseId === ids.get('disease'))!;
    expect(d).toMatchObject({ tooth: '36', outcome: 'disease', clinician: { id: world.clinician.userId }, decision: null, urgency: 'decide', canDecide: false });
    expect(d.patient?.name).toContain('Ashdown');
    expect(d.yearsSinceCompletion).toBeCloseTo(2.5, 0);
    expect(r.own).toBe(false);
  });

  it('the lead filters by clinician; a clinician sees only their own cases, whatever they ask', async () => {
    const cleo = (await outcomesWorklist(services.em(), world.auditor, { clinician: world.clinician2.userId })).rows.map((x) => x.caseId);
    expect(new Set(cleo)).toEqual(new Set([ids.get('uncertain5y'), ids.get('sinus')]));
    const own = await outcomesWorklist(services.em(), world.clinician2, { clinician: world.clinician.userId });
    expect(own.own).toBe(true);
    expect(own.rows.map((x) => x.caseId).sort()).toEqual([...cleo].sort());
    expect(own.rows.every((x) => x.canDecide)).toBe(true);
  });
});

describe('recording the next step', () => {
  const em = () => services.em();
  const future = (days: number) => addDaysTo(today, days);

  it('the lead cannot record (outcomes.decide is the clinicians’); a clinician cannot on another clinician’s case', async () => {
    await expect(recordDecision(em(), world.auditor, ids.get('disease')!, { step: 'watch', date: future(90) })).rejects.toMatchObject({ status: 403 });
    await expect(recordDecision(em(), world.clinician2, ids.get('disease')!, { step: 'watch', date: future(90) })).rejects.toMatchObject({ status: 403 });
    await expect(recordDecision(em(), world.coordinator, ids.get('disease')!, { step: 'watch', date: future(90) })).rejects.toMatchObject({ status: 403 });
  });

  it('bad input is a 422 per field; a case off the worklist 409; unknown and other practices’ ids 404', async () => {
    const id = ids.get('disease')!;
    const bad = async (body: unknown, field: string) => expect(recordDecision(em(), world.clinician, id, body)).rejects.toMatchObject({ status: 422, fieldErrors: { [field]: expect.any(Array) } });
    await bad({ step: 'pray', date: future(30) }, 'step');
    await bad({ step: 'watch', date: '2026-02-30' }, 'date');
    await bad({ step: 'watch', date: today }, 'date'); // a re-review is ahead
    await bad({ step: 'extract', date: future(2000) }, 'date'); // more than three years ahead
    await bad({ step: 'extract', date: addDaysTo(completion.get('disease')!, 100) }, 'date'); // before the latest review
    await bad({ step: 'retreat', date: future(30) }, 'apicalDiagnosis');
    await bad({ step: 'refer', date: today, note: 'x'.repeat(301) }, 'note');
    await bad({ step: 'refer', date: today, note: 'a\u0000b' }, 'note');
    await expect(recordDecision(em(), world.clinician, ids.get('healed')!, { step: 'watch', date: future(30) })).rejects.toMatchObject({ status: 409 });
    await expect(recordDecision(em(), world.clinician, '00000000-0000-4000-8000-000000000000', { step: 'watch', date: future(30) })).rejects.toMatchObject({ status: 404 });
    await expect(recordDecision(em(), world.clinician, otherCaseId, { step: 'watch', date: future(30) })).rejects.toMatchObject({ status: 404 });
    await expect(caseDecisions(em(), world.auditor, otherCaseId)).rejects.toMatchObject({ status: 404 });
  });

  it('watch and re-review adds a planned recall visit at the date when the case has no open visit', async () => {
    const id = ids.get('healing5y')!;
    const r = await recordDecision(em(), world.clinician, id, { step: 'watch', date: future(60), note: 'Re-take the film' });
    expect(r.created).toBe(true);
    expect(r.visit).toMatchObject({ created: true, dueDate: future(60) });
    const visit = await services.orm.em.getKnex()('recall_visit').where({ case_id: id, due_date: future(60) }).first();
    expect(visit).toMatchObject({ status: 'planned' });
    // the same step again writes nothing new
    const again = await recordDecision(em(), world.clinician, id, { step: 'watch', date: future(60), note: 'Re-take the film' });
    expect(again.created).toBe(false);
    expect(await services.orm.em.getKnex()('case_decision').where({ case_id: id }).count('* as n').first()).toMatchObject({ n: '1' });
  });

  it('watch on a case with an open recall visit adds none, and says so', async () => {
    const r = await recordDecision(em(), world.clinician, ids.get('young')!, { step: 'watch', date: future(30) });
    expect(r.visit).toMatchObject({ created: false, message: expect.stringContaining('open recall visit') });
  });

  it('retreat creates exactly one linked case, in progress, even when recorded twice; the worklist shows the link', async () => {
    const id = ids.get('disease')!;
    const first = await recordDecision(em(), world.clinician, id, { step: 'retreat', date: future(14), apicalDiagnosis: 'asymptomatic_apical_periodontitis' });
    expect(first.linkedCase).toMatchObject({ created: true });
    const second = await recordDecision(em(), world.clinician, id, { step: 'retreat', date: future(21), note: 'Moved a week', apicalDiagnosis: 'asymptomatic_apical_periodontitis' });
    expect(second.created).toBe(true);
    expect(second.linkedCase).toEqual({ id: first.linkedCase!.id, created: false });
    // two at once: still one case
    await Promise.all([
      recordDecision(em(), world.clinician, id, { step: 'retreat', date: future(28), apicalDiagnosis: 'asymptomatic_apical_periodontitis' }),
      recordDecision(em(), world.clinician, id, { step: 'retreat', date: future(28), apicalDiagnosis: 'asymptomatic_apical_periodontitis' }),
    ]);
    const later = await services.orm.em.getKnex()('treatment_case').where({ previous_case_id: id });
    expect(later).toHaveLength(1);
    expect(later[0]).toMatchObject({ kind: 'nonsurgical_retreatment', completion_date: null, pulpal_diagnosis: 'previously_treated', operator_id: world.clinician.userId, pai_score: 5, tooth: 36 });
    const list = await outcomesWorklist(em(), world.clinician, {});
    const row = list.rows.find((x) => x.caseId === id)!;
    expect(row.laterCase).toMatchObject({ id: first.linkedCase!.id, kind: 'nonsurgical_retreatment', completionDate: null });
    expect(row.decision).toMatchObject({ step: 'retreat', date: future(28), stands: true, linkedCaseId: first.linkedCase!.id });
    expect(row.urgency).toBe('in_hand');
    expect(row.decisions).toBe(3); // the concurrent duplicate wrote nothing
  });

  it('apical surgery, extract and refer; history newest first with corrections kept; the lead reads it, another clinician does not', async () => {
    const s = await recordDecision(em(), world.clinician2, ids.get('sinus')!, { step: 'surgery', date: today, apicalDiagnosis: 'chronic_apical_abscess' });
    expect(s.linkedCase?.created).toBe(true);
    const surgery = await services.orm.em.getKnex()('treatment_case').where({ id: s.linkedCase!.id }).first();
    expect(surgery).toMatchObject({ kind: 'apical_surgery', previous_case_id: ids.get('sinus'), apical_diagnosis: 'chronic_apical_abscess' });
    const id = ids.get('uncertain5y')!;
    // A step changes no data version, yet the list (its order kept between requests) shows it at once.
    const version = async () => (await services.orm.em.getKnex()('outcomes_data_version').where({ practice_id: world.practice.id }).first())?.version;
    const before = await outcomesWorklist(em(), world.clinician2, {});
    const v0 = await version();
    expect(before.rows.find((x) => x.caseId === id)).toMatchObject({ urgency: 'decide', decision: null });
    await recordDecision(em(), world.clinician2, id, { step: 'extract', date: future(10) });
    const after = await outcomesWorklist(em(), world.clinician2, {});
    expect(await version()).toBe(v0);
    expect(after.rows.find((x) => x.caseId === id)).toMatchObject({ urgency: 'in_hand', decision: { step: 'extract', date: future(10) } });
    expect(after.counts).toEqual({ ...before.counts, decide: before.counts.decide - 1, in_hand: before.counts.in_hand + 1 });
    await recordDecision(em(), world.clinician2, id, { step: 'refer', date: today, note: '=HYPERLINK("x")' });
    const history = await caseDecisions(em(), world.auditor, id);
    expect(history.map((h) => [h.step, h.replaced])).toEqual([['refer', false], ['extract', true]]);
    await expect(caseDecisions(em(), world.clinician, id)).rejects.toMatchObject({ status: 403 });
    expect(await services.orm.em.getKnex()('treatment_case').where({ previous_case_id: id })).toHaveLength(0);
  });

  it('the CSV lists the same cases through the one writer (formulas neutralised); reads, steps and downloads are audited', async () => {
    const csv = await worklistCsv(em(), world.auditor, {});
    const lines = csv.trim().split(/\r?\n/);
    expect(lines[0]).toContain('Next step');
    expect(lines).toHaveLength(1 + FIXTURES.filter((f) => f.listed).length);
    expect(csv).toContain(`"'=HYPERLINK(""x"")"`);
    const actions = (await services.orm.em.getKnex()('audit_event').where('practice_id', world.practice.id).select('action')).map((a: { action: string }) => a.action);
    for (const a of ['outcomes.worklist_read', 'outcomes.worklist_exported', 'outcomes.decision_recorded', 'outcomes.decisions_read', 'case.created']) expect(actions).toContain(a);
  });
});

describe('paging (issue 12, performance): the server answers one page of the urgency order', () => {
  it('the pages, in turn, are the whole list in the same order as the CSV; counts and total on every page; past the end is the last page', async () => {
    const em = () => services.em();
    const whole = await outcomesWorklist(em(), world.auditor, { pageSize: '200' });
    expect(whole.total).toBe(FIXTURES.filter((f) => f.listed).length);
    expect(whole.rows).toHaveLength(whole.total);
    // after the steps recorded above, the order depends on the current steps: in hand, by the step's date
    expect(whole.rows.filter((r) => r.decision).length).toBeGreaterThan(2);
    const inHand = whole.rows.filter((r) => r.urgency === 'in_hand').map((r) => r.decision!.date);
    expect(inHand.length).toBeGreaterThan(2);
    expect(inHand).toEqual([...inHand].sort());
    const tally = { decide: 0, overdue: 0, in_hand: 0 };
    for (const r of whole.rows) tally[r.urgency]++;
    expect(whole.counts).toEqual(tally);
    const csvCases = (await worklistCsv(em(), world.auditor, {})).trim().split(/\r?\n/).slice(1).map((l) => l.split(',')[1]);
    expect(whole.rows.map((r) => r.caseId)).toEqual(csvCases);

    const pages: typeof whole.rows = [];
    for (let page = 1; page <= Math.ceil(whole.total / 2); page++) {
      const p = await outcomesWorklist(em(), world.auditor, { page: String(page), pageSize: '2' });
      expect(p).toMatchObject({ page, pageSize: 2, total: whole.total, counts: whole.counts });
      expect(p.rows.length).toBe(Math.min(2, whole.total - (page - 1) * 2));
      pages.push(...p.rows);
    }
    expect(pages).toEqual(whole.rows);
    const past = await outcomesWorklist(em(), world.auditor, { page: '99', pageSize: '2' });
    expect(past.page).toBe(Math.ceil(whole.total / 2));
    expect(past.rows).toEqual(whole.rows.slice((past.page - 1) * 2));
    // a clinician's pages are their own cases
    const own = await outcomesWorklist(em(), world.clinician2, { pageSize: '1' });
    expect(own.rows).toHaveLength(1);
    expect(own.total).toBe(2);
    expect(own.rows[0]!.clinician.id).toBe(world.clinician2.userId);
    const event = (await services.orm.em.getKnex()('audit_event').where({ practice_id: world.practice.id, action: 'outcomes.worklist_read' }).orderBy('at', 'desc').first('detail')) as { detail: Record<string, unknown> };
    expect(event.detail).toMatchObject({ cases: 2, page: 1, rows: 1 });
  });

  it('a bad page or page size is a 422 on its field', async () => {
    for (const [q, field] of [
      [{ page: '0' }, 'page'],
      [{ page: 'two' }, 'page'],
      [{ pageSize: '201' }, 'pageSize'],
      [{ pageSize: '1.5' }, 'pageSize'],
    ] as const) {
      await expect(outcomesWorklist(services.em(), world.auditor, q)).rejects.toMatchObject({ status: 422, fieldErrors: { [field]: [expect.any(String)] } });
    }
  });
});

describe('the CSV streamed (issue 12, performance): one read through a cursor, written as it is read', () => {
  const inUse = () => (services.orm.em.getKnex().client as unknown as { pool: { numUsed(): number } }).pool.numUsed();
  const exported = async () => Number(((await services.orm.em.getKnex()('audit_event').where({ practice_id: world.practice.id, action: 'outcomes.worklist_exported' }).count('* as n')) as { n: string }[])[0]!.n);

  it('the streamed response is the same text as the CSV; a reader that stops early, or never reads, leaves no connection held; each download audited once', async () => {
    const text = await worklistCsv(services.em(), world.auditor, {});
    const before = await exported();
    const whole = csvDownload((await worklistCsvStream(services.em(), world.auditor, {})).chunks, 'w.csv');
    expect(whole.headers.get('content-type')).toContain('text/csv');
    expect(await whole.text()).toBe(text);
    expect(inUse()).toBe(0);
    // the reader goes away after the first chunk
    const cut = csvDownload((await worklistCsvStream(services.em(), world.auditor, {})).chunks, 'w.csv');
    const reader = cut.body!.getReader();
    expect(new TextDecoder().decode((await reader.read()).value)).toMatch(/^Urgency,Case,/);
    await reader.cancel();
    expect(inUse()).toBe(0);
    // asked for and never read: return() alone closes the cursor's transaction
    const { chunks, rows } = await worklistCsvStream(services.em(), world.auditor, {});
    expect(rows).toBe(text.trim().split(/\r?\n/).length - 1);
    expect(inUse()).toBe(1);
    await chunks.return!();
    expect(inUse()).toBe(0);
    expect(await exported()).toBe(before + 3);
  });
});
