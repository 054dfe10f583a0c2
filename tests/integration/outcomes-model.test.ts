import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import type { OutcomeCase } from '@/lib/outcomes';
import { multivariable, type CovariateChoice, type ModelFit } from '@/lib/outcomes/model';
import type { RecordedReview } from '@/lib/scoring';
import { createCase } from '@/lib/services/cases';
import { outcomesModel, outcomesModelCsv } from '@/lib/services/outcomes-model';
import { createPatient } from '@/lib/services/patients';
import { createReferrer } from '@/lib/services/referrers';
import { todayIn } from '@/lib/services/registry-common';
import { createReview } from '@/lib/services/reviews';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { completedOn, outcomeCase, review } from '../support/outcome-cases';

/**
 * Issue 12, item 4: the multivariable models the API returns equal a direct engine call
 * (lib/outcomes/model `multivariable`) on the rows THIS TEST defines — 48 teeth of 16 patients
 * (three teeth each), two clinicians, failures found at reviews — not on the service's query.
 */
const services = await openServices();
afterAll(() => services.close());

const today = todayIn('Europe/London');
const DONE = addMonthsClamped(today, -32);
const TEETH = [16, 24, 36, 45, 11, 47];
const groupOf = (t: number) => (t % 10 <= 2 ? 'incisor' : t % 10 === 3 ? 'canine' : t % 10 <= 5 ? 'premolar' : 'molar');

interface Fixture {
  who: 'cal' | 'cleo';
  patient: number;
  tooth: number;
  kind: 'primary_treatment' | 'nonsurgical_retreatment';
  pai: number;
  lesion: number;
  reviews: { day: number; status: RecordedReview['toothStatus'] }[];
}

const FIXTURE: Fixture[] = Array.from({ length: 48 }, (_, i) => {
  const pai = (i % 5) + 1;
  const lesion = pai >= 3 ? [2, 4, 6, 8][i % 4]! : 0;
  const early = i % 6 === 0;
  const late = !early && (i % 7 === 0 || (lesion > 0 && i % 5 === 3));
  const reviews = early
    ? [{ day: 365, status: 'retreated' as const }]
    : late
      ? [{ day: 365, status: 'present' as const }, { day: 740, status: 'retreated' as const }]
      : [{ day: 365, status: 'present' as const }, { day: 730, status: 'present' as const }];
  return { who: i % 2 ? 'cal' : 'cleo', patient: Math.floor(i / 3), tooth: TEETH[i % 6]!, kind: i % 4 === 0 ? 'nonsurgical_retreatment' : 'primary_treatment', pai, lesion, reviews };
});

let world: Awaited<ReturnType<typeof makeRegistryPractice>>;
/** The fixture as the engine's rows, with the ids the services gave. */
const rows: OutcomeCase[] = [];

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  world = await makeRegistryPractice(services.em(), 'outcomes-model');
  const patients: string[] = [];
  for (let p = 0; p < 16; p++) {
    const patient = await createPatient(services.em(), world.clinician, patientInput({ registryNumber: `M-${p}`, email: `m${p}@patients.test.invalid` }));
    patients.push(patient.id);
  }
  for (const f of FIXTURE) {
    const operator = f.who === 'cal' ? world.clinician : world.clinician2;
    const c = await createCase(
      services.em(),
      world.clinician,
      caseInput(patients[f.patient]!, operator.userId, {
        ...completedOn(DONE, f.kind),
        tooth: f.tooth,
        paiScore: f.pai,
        lesionDiameterMm: f.lesion,
      }),
    );
    for (const r of f.reviews) {
      await createReview(services.em(), operator, c.id, { reviewDate: addDaysTo(DONE, r.day), toothStatus: r.status, ...(r.status === 'present' ? { paiScore: 1, lesionDiameterMm: 0 } : {}) });
    }
    rows.push(
      outcomeCase({
        id: c.id,
        patientId: patients[f.patient]!,
        operatorId: operator.userId,
        kind: f.kind,
        completionDate: DONE,
        baselinePai: f.pai,
        lesionDiameterMm: f.lesion,
        fillLengthClass: null,
        toothGroup: groupOf(f.tooth),
        toothArch: Math.floor(f.tooth / 10) <= 2 ? 'upper' : 'lower',
        reviews: f.reviews.map((r) => review(r.day, r.status, { paiScore: r.status === 'present' ? 1 : null, from: DONE })),
      }),
    );
  }
}, 120_000);

function expectSameFit(got: ModelFit, want: ModelFit) {
  const { terms: gotTerms, ...gotRest } = got;
  const { terms: wantTerms, ...wantRest } = want;
  expect(gotRest).toEqual(wantRest);
  expect(gotTerms.map((t) => [t.label, t.term, t.reference])).toEqual(wantTerms.map((t) => [t.label, t.term, t.reference]));
  gotTerms.forEach((t, k) => {
    const w = wantTerms[k]!;
    for (const key of ['coef', 'se', 'robustSe', 'ratio', 'lower', 'upper', 'pValue'] as const) expect(t[key]).toBeCloseTo(w[key]!, 10);
  });
}

const CHOICES: CovariateChoice[] = [{ key: 'kind' }, { key: 'lesion', numeric: true }];

describe('multivariable models (issue 12, item 4)', () => {
  it('the lead: both models equal lib/outcomes/model on the fixture rows, with events, cases and patients', async () => {
    const r = await outcomesModel(services.em(), world.auditor, { covariates: 'kind,lesion', lesionAs: 'numeric' });
    expect(r.own).toBe(false);
    expect(r.chosen).toEqual({ covariates: ['kind', 'lesion'], lesionAs: 'numeric', paiAs: 'numeric' });
    const want = multivariable(rows, rows, CHOICES, { endpoint: 'healing', minObs: 365 });
    expectSameFit(r.result.cox, want.cox);
    expectSameFit(r.result.logistic, want.logistic);
    // the fixture's own arithmetic: 48 teeth of 16 patients; failures found early (i % 6 = 0) or later
    const failures = FIXTURE.filter((f) => f.reviews.some((x) => x.status !== 'present')).length;
    expect([r.result.cox.cases, r.result.cox.patients, r.result.cox.events]).toEqual([48, 16, failures]);
    const early = FIXTURE.filter((f) => f.reviews[0]!.status === 'retreated').length;
    expect([r.result.logistic.successes, r.result.logistic.failures]).toEqual([48 - early, early]);
    expect(r.result.cox.terms.map((t) => t.term)).toEqual(['Non-surgical retreatment', 'per mm']);
    expect(r.result.logistic.lowEpv).toBe(true); // 8 failures for 2 coefficients
    expect(r.result.logistic.epv).toBe(4);
  });

  it('a small level is left out with its rows, and separation is reported, not thrown', async () => {
    const r = await outcomesModel(services.em(), world.auditor, { covariates: 'kind,lesion,group', lesionAs: 'numeric' });
    const choices: CovariateChoice[] = [...CHOICES, { key: 'group' }];
    const want = multivariable(rows, rows, choices, { endpoint: 'healing', minObs: 365 });
    expectSameFit(r.result.cox, want.cox);
    expectSameFit(r.result.logistic, want.logistic);
    // 8 incisors (tooth 11) are fewer than 10: out; molar (24) the reference, premolar (16) a column
    expect(r.result.cox.notes).toContain('Tooth group: 8 cases of Incisor left out of the model, fewer than 10 cases.');
    expect(r.result.cox.cases).toBe(40);
    expect(r.result.cox.references.find((x) => x.covariate === 'group')).toMatchObject({ level: 'Molar', rows: 24 });
    // every early failure (i % 6 = 0) is a tooth 16, a molar: no premolar failed by 12 months
    expect(r.result.logistic.terms).toEqual([]);
    expect(r.result.logistic.error).toMatch(/Tooth group: Premolar has only successes .*separation/);
  });

  it('tooth loss as the endpoint and the default choice (kind, lesion bands, PAI per point)', async () => {
    const r = await outcomesModel(services.em(), world.auditor, { endpoint: 'tooth' });
    const want = multivariable(rows, rows, [{ key: 'kind' }, { key: 'lesion', numeric: false }, { key: 'pai', numeric: true }], { endpoint: 'tooth', minObs: 365 });
    expectSameFit(r.result.cox, want.cox);
    expect(r.result.cox.error).toMatch(/No failures/); // no extraction in the fixture: said, not thrown
  });

  it('a clinician sees the models of their own cases only, whatever clinician they ask for', async () => {
    const r = await outcomesModel(services.em(), world.clinician, { clinician: world.clinician2.userId, covariates: 'kind,lesion,clinician', lesionAs: 'numeric' });
    expect(r.own).toBe(true);
    expect(r.filter.clinician).toBe(world.clinician.userId);
    const mine = rows.filter((c) => c.operatorId === world.clinician.userId);
    const want = multivariable(mine, rows, [{ key: 'kind' }, { key: 'lesion', numeric: true }, { key: 'clinician' }], { endpoint: 'healing', minObs: 365 });
    expectSameFit(r.result.cox, want.cox);
    expectSameFit(r.result.logistic, want.logistic);
    expect(r.result.cox.cases).toBe(24);
    expect(r.result.cox.notes).toContain('Clinician is left out: one level only in this selection.');
    expect(JSON.stringify(r)).not.toContain(world.clinician2.userId);
  });

  it('the lead’s clinician factor names the clinicians', async () => {
    const r = await outcomesModel(services.em(), world.auditor, { covariates: 'clinician' });
    const ref = r.result.cox.references[0]!;
    expect(ref.covariate).toBe('clinician');
    expect(`${ref.level} ${r.result.cox.terms[0]!.term}`).not.toMatch(/[0-9a-f]{8}-/);
  });

  it('the referrer factor names the referrers as the factor view does, never by id', async () => {
    const knex = services.orm.em.getKnex();
    const referrer = await createReferrer(services.em(), world.coordinator, { name: 'Dr Ada Referral' });
    const ids = rows.filter((_, i) => i % 2 === 0).map((c) => c.id);
    await knex('treatment_case').whereIn('id', ids).update({ referrer_id: referrer.id });
    try {
      const r = await outcomesModel(services.em(), world.auditor, { covariates: 'referrer' });
      const levels = [r.result.cox.references[0]!.level, ...r.result.cox.terms.map((t) => t.term)];
      expect(levels.sort()).toEqual(['Dr Ada Referral', 'No referrer recorded']);
      expect(JSON.stringify(r.result)).not.toContain(referrer.id);
    } finally {
      await knex('treatment_case').whereIn('id', ids).update({ referrer_id: null });
    }
  });

  it('bad input is a 422; other roles a 403', async () => {
    for (const bad of [{ covariates: 'horoscope' }, { lesionAs: 'cubes' }, { paiAs: 'x' }, { endpoint: 'moon' }, { from: '2026-02-30' }, { covariates: 'kind,'.repeat(30) }]) {
      await expect(outcomesModel(services.em(), world.auditor, bad)).rejects.toMatchObject({ status: 422 });
    }
    await expect(outcomesModel(services.em(), world.coordinator, {})).rejects.toMatchObject({ status: 403 });
    await expect(outcomesModel(services.em(), world.admin, {})).rejects.toMatchObject({ status: 403 });
  });

  it('both tables as CSV through the one CSV writer; reads and downloads audited', async () => {
    const csv = await outcomesModelCsv(services.em(), world.auditor, { covariates: 'kind,lesion', lesionAs: 'numeric' });
    const lines = csv.split('\r\n');
    expect(lines[0]).toBe('Model,Outcome,Factor,Level (vs reference),Ratio,Estimate,95% lower,95% upper,p,"Robust SE (log scale, by patient)"');
    const want = multivariable(rows, rows, CHOICES, { endpoint: 'healing', minObs: 365 });
    const kindRow = lines.find((l) => l.startsWith('Cox,Time to failure to heal,Treatment kind,'))!;
    expect(Number(kindRow.split(',')[5])).toBeCloseTo(want.cox.terms[0]!.ratio, 10);
    expect(lines.some((l) => l.startsWith('Logistic,Strict success (healed) at 12 months,Treatment kind,'))).toBe(true);
    expect(csv).toContain('Peduzzi');
    const knex = services.orm.em.getKnex();
    const events = (await knex('audit_event').where({ practice_id: world.practice.id }).select('action', 'detail')) as { action: string; detail: Record<string, unknown> }[];
    expect(events.map((e) => e.action)).toEqual(expect.arrayContaining(['outcomes.model_read', 'outcomes.exported']));
    expect(events.find((e) => e.action === 'outcomes.exported')?.detail).toMatchObject({ view: 'model', covariates: 'kind,lesion' });
  });
});
