import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { createCase, updateCase } from '@/lib/services/cases';
import { archivePatient, createPatient } from '@/lib/services/patients';
import { outcomesByFactor, outcomesCsv, outcomesCurves, outcomesOverview, OUTCOME_READER, readOutcomeCases } from '@/lib/services/outcomes';
import { cachedOutcomeCases, cachedPractices, dueForWarming, forgetOutcomeViews, invalidateOutcomeCases, keptViewCount, lastOutcomesRefresh, warmOutcomes } from '@/lib/services/outcomes-cache';
import { prepareRows } from '@/lib/services/outcomes-warm';
import { outcomesFunnel } from '@/lib/services/outcomes-funnel';
import { outcomesModel } from '@/lib/services/outcomes-model';
import { outcomesReportData, outcomesReportPdf } from '@/lib/services/outcomes-report';
import { warmPractice } from '@/lib/services/outcomes-warm';
import { outcomesWorklist, worklistCsv } from '@/lib/services/outcomes-worklist';
import { todayIn } from '@/lib/services/registry-common';
import { createReview } from '@/lib/services/reviews';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { completedOn } from '../support/outcome-cases';

/**
 * Issue 12, speed: after a write the outcomes cache re-reads only the changed cases
 * (lib/services/outcomes-cache.ts, incremental refresh; migrations/Migration20261202230000.ts) or
 * the warmer computes the recent views again on the new rows. Whatever the path, every view must
 * then equal what a fresh full read gives (the cache emptied, everything read and computed again).
 */
const services = await openServices();
afterAll(() => services.close());

const today = todayIn('Europe/London');
let world: Awaited<ReturnType<typeof makeRegistryPractice>>;
const patients: string[] = [];
const cases: string[] = [];
const NOW = new Date('2026-01-01T12:00:00Z');

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  world = await makeRegistryPractice(services.em(), 'refresh');
  // invented: 8 patients, 12 completed cases of both clinicians, with reviews healing, not healing and an extraction
  for (let i = 0; i < 8; i++) {
    patients.push((await createPatient(services.em(), world.clinician, patientInput({ registryNumber: `R-${i + 1}`, email: `r${i + 1}@patients.test.invalid` }))).id);
  }
  for (let i = 0; i < 12; i++) {
    const operator = i % 2 ? world.clinician : world.clinician2;
    const done = addMonthsClamped(today, -(14 + 3 * i));
    const c = await createCase(
      services.em(),
      world.clinician,
      caseInput(patients[i % 8]!, operator.userId, { ...completedOn(done, i % 3 ? 'primary_treatment' : 'nonsurgical_retreatment'), tooth: [36, 46, 11, 24, 37, 47][i % 6], paiScore: 2 + (i % 3), lesionDiameterMm: 2 + (i % 3) >= 3 ? 1 + (i % 4) : 0 }),
    );
    cases.push(c.id);
    const reviews = i % 5 === 4 ? [] : [{ day: 365, pai: 1 + (i % 4) }, ...(i > 3 ? [{ day: 730, pai: 1 + (i % 3) }] : [])];
    for (const r of reviews) await createReview(services.em(), operator, c.id, { reviewDate: addDaysTo(done, r.day), toothStatus: 'present', paiScore: r.pai, lesionDiameterMm: r.pai >= 3 ? 2 : 0 });
    if (i === 7) await createReview(services.em(), operator, c.id, { reviewDate: addDaysTo(done, 800), toothStatus: 'extracted', extractionReason: 'fracture' });
  }
});

const lead = () => world.auditor;
/** Every view the lead opens (as JSON), the clinician's overview, and the CSVs. */
async function views() {
  const em = () => services.em();
  const out = {
    overview: await outcomesOverview(em(), lead(), {}),
    own: await outcomesOverview(em(), world.clinician, {}),
    factor: await outcomesByFactor(em(), lead(), { factor: 'kind' }),
    clinicianFactor: await outcomesByFactor(em(), lead(), { factor: 'clinician' }),
    healing: await outcomesCurves(em(), lead(), { endpoint: 'healing', method: 'km' }),
    tooth: await outcomesCurves(em(), lead(), { endpoint: 'tooth', method: 'turnbull', factor: 'kind' }),
    funnel: await outcomesFunnel(em(), lead(), { adjust: 'crude' }),
    model: await outcomesModel(em(), lead(), {}),
    worklist: await outcomesWorklist(em(), lead(), {}),
    report: await outcomesReportData(em(), lead(), { factor: 'clinician' }, NOW),
    csv: await outcomesCsv(em(), lead(), 'overview', {}),
  };
  // the figures, without when their rows were read (asOf: a time, checked below)
  return JSON.parse(JSON.stringify(out, (k, v: unknown) => (k === 'asOf' ? undefined : v))) as unknown;
}

/** After `write`, the views through the cache equal the views of a fresh full read; returns how the cache refreshed. */
async function expectFreshAfter(write: () => Promise<unknown>, o: { warm?: boolean } = {}) {
  await views(); // the cache and the kept figures are at the current version
  await write();
  let warmed = 0;
  // as the server's warmer runs it: the new rows' facts built in slices first (prepareRows), then the views
  if (o.warm) warmed = await warmOutcomes(services.em(), world.practice.id, OUTCOME_READER, prepareRows);
  const cached = await views();
  const refresh = lastOutcomesRefresh();
  const rows = (await cachedOutcomeCases(services.em(), world.practice.id, OUTCOME_READER)).rows;
  invalidateOutcomeCases();
  expect(rows).toEqual(await readOutcomeCases(services.em(), world.practice.id));
  expect(cached).toEqual(await views());
  return { refresh, warmed };
}

describe('outcomes cache after a write (incremental refresh)', () => {
  it('a review added: only its case is read again, and every view equals a fresh read', async () => {
    const { refresh } = await expectFreshAfter(() =>
      createReview(services.em(), world.clinician2, cases[4]!, { reviewDate: addDaysTo(addMonthsClamped(today, -26), 700), toothStatus: 'present', paiScore: 4, lesionDiameterMm: 3 }),
    );
    expect(refresh).toMatchObject({ kind: 'partial', changedCases: 1, changedPatients: 0 });
  });

  it('a case edited (its completion date moves it in the order, the lesion changes a factor level)', async () => {
    const { refresh } = await expectFreshAfter(() => updateCase(services.em(), world.clinician, cases[3]!, { lesionDiameterMm: 7, paiScore: 4, startDate: addMonthsClamped(today, -41), completionDate: addMonthsClamped(today, -40) }));
    expect(refresh).toMatchObject({ kind: 'partial', changedCases: 1 });
  });

  it("a patient archived: the patient's cases leave every view", async () => {
    const before = (await cachedOutcomeCases(services.em(), world.practice.id, OUTCOME_READER)).rows.length;
    const { refresh } = await expectFreshAfter(() => archivePatient(services.em(), world.clinician, patients[1]!));
    expect(refresh).toMatchObject({ kind: 'partial', changedPatients: 1 });
    expect((await cachedOutcomeCases(services.em(), world.practice.id, OUTCOME_READER)).rows.length).toBe(before - 2); // cases 1 and 9
  });

  it('a follow-on case on a tooth (the earlier case’s tooth-loss chain) and a recall visit closed by raw SQL', async () => {
    const { refresh } = await expectFreshAfter(async () => {
      const c = await createCase(
        services.em(),
        world.clinician,
        caseInput(patients[0]!, world.clinician.userId, { ...completedOn(addMonthsClamped(today, -3), 'nonsurgical_retreatment'), tooth: 36, previousCaseId: cases[0] }),
      );
      cases.push(c.id);
      await services.orm.em.getKnex()('recall_visit').where({ case_id: cases[2] }).whereIn('status', ['planned', 'invited', 'confirmed']).update({ status: 'closed', lost_to_follow_up: true });
    });
    expect(refresh).toMatchObject({ kind: 'partial' });
    expect(refresh!.changedCases).toBeGreaterThanOrEqual(2);
  });

  it('the warmer brings the cache and the recent views up to date in the background', async () => {
    const { refresh, warmed } = await expectFreshAfter(() => updateCase(services.em(), world.clinician2, cases[7]!, { paiScore: 5 }), { warm: true });
    expect(refresh).toMatchObject({ kind: 'partial', changedCases: 1 });
    expect(warmed).toBeGreaterThan(5); // the views above, computed before anyone asked
  });

  it('a version whose changes are missing makes a full read', async () => {
    const { refresh } = await expectFreshAfter(async () => {
      await updateCase(services.em(), world.clinician, cases[5]!, { lesionDiameterMm: 1 });
      await services.orm.em.getKnex()('outcomes_data_change').where({ practice_id: world.practice.id }).delete();
    });
    expect(refresh).toMatchObject({ kind: 'full', reason: 'gap' });
  });

  it('a statement changing more than 2,000 cases writes one "everything" change, and the cache reads everything again', async () => {
    const knex = services.orm.em.getKnex();
    const version = async () => Number((await knex('outcomes_data_version').where({ practice_id: world.practice.id }).first('version')).version);
    const v0 = await version();
    // a bulk statement on 2,001 rows: 2,001 patients inserted at once (invented)
    await knex('patient').insert(
      Array.from({ length: 2001 }, (_, i) => ({
        id: crypto.randomUUID(),
        practice_id: world.practice.id,
        registry_number: `BULK-${i}`,
        given_name: 'Bulk',
        family_name: `Patient ${i}`,
        date_of_birth: '1980-01-01',
        sex: 'not_stated',
        recall_contact: false,
        recall_channel: 'none',
        research_use: false,
        consent_date: '2024-01-01',
        created_at: new Date(),
        updated_at: new Date(),
      })),
    );
    expect(await version()).toBe(v0 + 1);
    const rows = await knex('outcomes_data_change').where({ practice_id: world.practice.id, version: v0 + 1 });
    expect(rows).toEqual([expect.objectContaining({ case_id: null, patient_id: null })]);
    await cachedOutcomeCases(services.em(), world.practice.id, OUTCOME_READER);
    expect(lastOutcomesRefresh()).toMatchObject({ kind: 'full', reason: 'bulk' });
    const { refresh } = await expectFreshAfter(() => updateCase(services.em(), world.clinician, cases[5]!, { lesionDiameterMm: 2 }));
    expect(refresh).toMatchObject({ kind: 'partial' }); // the next single change is small again
  });
});

describe("the web server's start (lib/services/outcomes-warm.ts)", () => {
  it("computes each view's practice-wide default once, kept for the lead, and writes nothing to the audit trail", async () => {
    const knex = services.orm.em.getKnex();
    const audits = async () => Number(((await knex('audit_event').where({ practice_id: world.practice.id }).count('* as n')) as { n: string }[])[0]!.n);
    invalidateOutcomeCases();
    forgetOutcomeViews();
    expect(keptViewCount()).toBe(0);
    const before = await audits();
    await warmPractice(async () => services.em(), world.practice.id);
    expect(await audits()).toBe(before);
    const kept = keptViewCount();
    expect(kept).toBeGreaterThanOrEqual(6); // overview, factor, curves, model, funnel, worklist (and the clinicians who treated)
    // the lead's first look at each view is a kept figure: nothing new is computed
    const em = () => services.em();
    await outcomesOverview(em(), lead(), {});
    await outcomesByFactor(em(), lead(), {});
    await outcomesCurves(em(), lead(), {});
    await outcomesModel(em(), lead(), {});
    await outcomesFunnel(em(), lead(), {});
    await outcomesWorklist(em(), lead(), {});
    expect(keptViewCount()).toBe(kept);
    // the report and the CSV are made for the lead as before (the start drew and dropped its own), and audited
    expect((await outcomesReportPdf(em(), lead(), {})).pdf.subarray(0, 5).toString()).toBe('%PDF-');
    expect((await worklistCsv(em(), lead(), {})).split('\r\n')[0]).toMatch(/^Urgency,Case,/);
    expect(await audits()).toBe(before + 8);
  });
});

describe('bounded lag while entries are being saved (issue 15, load)', () => {
  const LAG = 60_000;
  const read = (maxLagMs: number) => cachedOutcomeCases(services.em(), world.practice.id, OUTCOME_READER, maxLagMs);

  it('rows read less than maxLagMs ago are served after a write, marked behind; older ones, or maxLagMs 0, are brought up to date', async () => {
    invalidateOutcomeCases();
    const t0 = Date.now();
    const clock = vi.spyOn(Date, 'now').mockReturnValue(t0);
    try {
      const before = await read(LAG);
      expect(before.asOf).toEqual({ at: new Date(t0).toISOString(), behind: false, maxLagMs: LAG });
      await createReview(services.em(), world.clinician, cases[8]!, { reviewDate: addDaysTo(today, -1), toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });

      clock.mockReturnValue(t0 + LAG - 1);
      const lagging = await read(LAG);
      expect(lagging.version).toBe(before.version);
      expect(lagging.rows).toBe(before.rows);
      expect(lagging.asOf).toEqual({ at: new Date(t0).toISOString(), behind: true, maxLagMs: LAG });

      // the same moment without a lag allowed (the cohort counts): the write is there
      const current = await read(0);
      expect(BigInt(current.version)).toBe(BigInt(before.version) + 1n);
      expect(current.asOf.behind).toBe(false);
      invalidateOutcomeCases();
      expect(current.rows).toEqual(await readOutcomeCases(services.em(), world.practice.id));

      // rows read maxLagMs ago are not served behind: the first request after a quiet spell sees the write
      await read(0);
      const quiet = cachedPractices().find((p) => p.practiceId === world.practice.id)!;
      await createReview(services.em(), world.clinician, cases[8]!, { reviewDate: today, toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });
      clock.mockReturnValue(quiet.readAt + LAG);
      const after = await read(LAG);
      expect(BigInt(after.version)).toBe(BigInt(quiet.version) + 1n);
      expect(after.asOf).toEqual({ at: new Date(quiet.readAt + LAG).toISOString(), behind: false, maxLagMs: LAG });
    } finally {
      clock.mockRestore();
    }
  });

  it('the warmer takes a practice whose version moved on once its rows are nearly as old as the lag allows', () => {
    const TICK = 2_000;
    const held = [
      { practiceId: 'a', version: '7', readAt: 1_000 },
      { practiceId: 'b', version: '3', readAt: 1_000 },
      { practiceId: 'c', version: '9', readAt: 40_000 },
    ];
    const versions = new Map([
      ['a', '8'], // moved on, read 56 s ago (the lag less two ticks): due
      ['b', '3'], // unchanged
      ['c', '10'], // moved on, read 17 s ago: not yet
    ]);
    expect(dueForWarming(held, versions, 57_000, LAG, TICK)).toEqual(['a']);
    expect(dueForWarming(held, versions, 56_999, LAG, TICK)).toEqual([]);
    // ticks as long as the lag: half the lag
    expect(dueForWarming(held, versions, 31_000, LAG, LAG)).toEqual(['a']);
    expect(dueForWarming(held, versions, 30_999, LAG, LAG)).toEqual([]);
    expect(dueForWarming(held, versions, 41_000, 0, TICK)).toEqual(['a', 'c']); // no lag allowed: every practice that moved on
    expect(dueForWarming(held, new Map(), 99_000, 0, TICK)).toEqual([]); // a practice gone from the database
  });
});
