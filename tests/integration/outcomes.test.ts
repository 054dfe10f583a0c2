import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { assessRecordedReview, caseObservations, recordedHistory, type RecordedReview, type ReviewOutcome } from '@/lib/scoring';
import { cumulativeIncidence, fisherExact2x2, kaplanMeier, logRank, medianSurvival, restrictedMeanInterval, turnbull, wilsonInterval } from '@/lib/stats';
import { createCase } from '@/lib/services/cases';
import { outcomesByFactor, outcomesCsv, outcomesCurves, outcomesOverview } from '@/lib/services/outcomes';
import { createPatient } from '@/lib/services/patients';
import { createReferrer } from '@/lib/services/referrers';
import { todayIn } from '@/lib/services/registry-common';
import { createReview } from '@/lib/services/reviews';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { completedOn, review } from '../support/outcome-cases';

/**
 * Issue 12: every figure the outcomes API returns equals a direct engine call (lib/scoring,
 * lib/stats) on the rows THIS TEST defines — not on the service's query. The fixture world:
 * six cases with known reviews; for each, the test says which review is the 12- and 24-month
 * one and what the latest review a year or more after completion is.
 */
const services = await openServices();
afterAll(() => services.close());

const today = todayIn('Europe/London');

interface FixtureCase {
  key: string;
  who: 'cal' | 'cleo';
  kind: 'primary_treatment' | 'nonsurgical_retreatment';
  monthsBack: number;
  pai: number;
  lesion: number;
  reviews: { day: number; status: RecordedReview['toothStatus']; pai?: number }[];
  /** index of the review that counts at 12 / 24 months, and at the latest review ≥ 1 year (null: not seen) */
  at12: number | null;
  at24: number | null;
  latest: number | null;
  /** due at 12 / 24 months (the window ended before today) */
  due12: boolean;
  due24: boolean;
  /** the desk closed the case's open recall visits as lost to follow-up (not what makes a case lost: lib/outcomes lostAt) */
  closed?: boolean;
  /** treatment and restoration (item 2's factors); undefined = not recorded */
  tooth: number;
  sealer?: 'epoxy_resin' | 'calcium_silicate';
  density?: 'homogeneous' | 'voids';
  complications?: string[];
  referrer?: 'r1' | 'r2';
  definitive?: 'crown';
}

const CASES: FixtureCase[] = [
  { key: 'A', who: 'cal', kind: 'primary_treatment', monthsBack: 32, pai: 4, lesion: 4, reviews: [{ day: 365, status: 'present', pai: 1 }, { day: 730, status: 'present', pai: 1 }], at12: 0, at24: 1, latest: 1, due12: true, due24: true, closed: true, tooth: 36, sealer: 'epoxy_resin', density: 'homogeneous', referrer: 'r1', definitive: 'crown' },
  { key: 'B', who: 'cal', kind: 'primary_treatment', monthsBack: 32, pai: 4, lesion: 4, reviews: [{ day: 370, status: 'present', pai: 3 }, { day: 740, status: 'extracted' }], at12: 0, at24: 1, latest: 1, due12: true, due24: true, tooth: 46, sealer: 'calcium_silicate', density: 'voids', complications: ['separated_instrument'], referrer: 'r1' },
  { key: 'C', who: 'cleo', kind: 'nonsurgical_retreatment', monthsBack: 32, pai: 3, lesion: 3, reviews: [{ day: 360, status: 'present', pai: 3 }, { day: 720, status: 'present', pai: 3 }], at12: 0, at24: 1, latest: 1, due12: true, due24: true, tooth: 24, sealer: 'epoxy_resin', density: 'voids', referrer: 'r2' },
  { key: 'D', who: 'cleo', kind: 'primary_treatment', monthsBack: 16, pai: 1, lesion: 0, reviews: [{ day: 365, status: 'present', pai: 1 }], at12: 0, at24: null, latest: 0, due12: true, due24: false, tooth: 11 },
  { key: 'E', who: 'cal', kind: 'primary_treatment', monthsBack: 32, pai: 4, lesion: 6, reviews: [], at12: null, at24: null, latest: null, due12: true, due24: true, tooth: 37, sealer: 'epoxy_resin', density: 'homogeneous', referrer: 'r2' },
  { key: 'F', who: 'cleo', kind: 'primary_treatment', monthsBack: 5, pai: 2, lesion: 0, reviews: [], at12: null, at24: null, latest: null, due12: false, due24: false, tooth: 15, sealer: 'calcium_silicate', density: 'homogeneous' },
];

let world: Awaited<ReturnType<typeof makeRegistryPractice>>;
const completion = new Map<string, string>();
const referrerIds = new Map<string, string>();

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  world = await makeRegistryPractice(services.em(), 'outcomes');
  const knex = services.orm.em.getKnex();
  for (const [key, name] of [['r1', 'Hazel Dental Studio'], ['r2', 'Quarry Lane Dentistry']] as const) {
    referrerIds.set(key, (await createReferrer(services.em(), world.clinician, { name })).id);
  }
  let n = 0;
  for (const f of CASES) {
    const operator = f.who === 'cal' ? world.clinician : world.clinician2;
    const patient = await createPatient(services.em(), world.clinician, patientInput({ registryNumber: `T-${++n}`, email: `p${n}@patients.test.invalid` }));
    const done = addMonthsClamped(today, -f.monthsBack);
    completion.set(f.key, done);
    const c = await createCase(
      services.em(),
      world.clinician,
      caseInput(patient.id, operator.userId, {
        ...completedOn(done, f.kind),
        paiScore: f.pai,
        lesionDiameterMm: f.lesion,
        tooth: f.tooth,
        sealerClass: f.sealer,
        fillDensity: f.density,
        complications: f.complications ?? [],
        referrerId: f.referrer ? referrerIds.get(f.referrer) : undefined,
        ...(f.definitive ? { definitiveRestoration: f.definitive, definitiveRestorationDate: addDaysTo(done, 30) } : {}),
      }),
    );
    for (const r of f.reviews) {
      await createReview(services.em(), operator, c.id, {
        reviewDate: addDaysTo(done, r.day),
        toothStatus: r.status,
        ...(r.status === 'present' ? { paiScore: r.pai, lesionDiameterMm: r.pai! >= 3 ? 2 : 0 } : { extractionReason: 'fracture' }),
      });
    }
    if (f.closed) await knex('recall_visit').where({ case_id: c.id }).whereIn('status', ['planned', 'invited', 'confirmed']).update({ status: 'closed', lost_to_follow_up: true });
  }
});

// --- the expected figures, from lib/scoring and lib/stats on the fixture's own rows -------------

const recorded = (f: FixtureCase, i: number): RecordedReview => {
  const r = f.reviews[i]!;
  return review(r.day, r.status, { paiScore: r.pai ?? null, from: completion.get(f.key)! });
};
const outcome = (f: FixtureCase, i: number | null): ReviewOutcome | null =>
  i === null ? null : assessRecordedReview({ completionDate: completion.get(f.key)!, baselinePai: f.pai }, recorded(f, i), 365).outcome;

function expectedSuccess(cases: FixtureCase[], pick: (f: FixtureCase) => number | null, due: (f: FixtureCase) => boolean) {
  const outs = cases.map((f) => ({ f, o: outcome(f, pick(f)) }));
  const judged = outs.filter((x) => x.o !== null && x.o !== 'uncertain');
  const strict = judged.filter((x) => x.o === 'healed').length;
  const lenient = judged.filter((x) => x.o === 'healed' || x.o === 'healing').length;
  const missing = outs.filter((x) => x.o === null && due(x.f)).length;
  return { n: judged.length, strict, lenient, missing, uncertain: outs.filter((x) => x.o === 'uncertain').length };
}

function expectRate(got: { x: number; n: number; estimate: number | null; lower: number | null; upper: number | null }, x: number, n: number) {
  expect([got.x, got.n]).toEqual([x, n]);
  if (n === 0) return expect(got.estimate).toBeNull();
  const w = wilsonInterval(x, n);
  expect(got.estimate).toBeCloseTo(w.estimate, 12);
  expect(got.lower).toBeCloseTo(w.lower, 12);
  expect(got.upper).toBeCloseTo(w.upper, 12);
}

function toothIntervals(cases: FixtureCase[]) {
  return cases.map((f) => caseObservations(recordedHistory({ completionDate: completion.get(f.key)!, baselinePai: f.pai }, f.reviews.map((_, i) => recorded(f, i))), { minObservationDays: 365 }).toothLoss);
}

describe('outcomes overview (issue 12, items 1 and 6)', () => {
  it('the lead sees every case; each figure equals lib/scoring and lib/stats on the fixture rows', async () => {
    const { overview: o, own, practice } = await outcomesOverview(services.em(), world.auditor, {});
    expect(own).toBe(false);
    expect(practice).toBeNull();
    expect(o.cases).toBe(6);
    expect(o.reviewed).toBe(4);
    // lost to follow-up (lib/outcomes lostAt): due for the 12-month review and no outcome a year or
    // more after completion — E only (no review), still invited (its visits are open); A's later
    // visit was closed as lost by the desk, but A was seen: not lost
    const lost = CASES.filter((f) => f.due12 && f.latest === null);
    expect(lost.map((f) => f.key)).toEqual(['E']);
    expectRate(o.lost, lost.length, CASES.filter((f) => f.due12).length);
    expect(o.lostStillInvited).toBe(1);
    // completeness: seen at the milestone ÷ due
    const seen12 = CASES.filter((f) => f.due12 && f.at12 !== null).length;
    const seen24 = CASES.filter((f) => f.due24 && f.at24 !== null).length;
    expectRate(o.completeness.find((c) => c.months === 12)!.rate, seen12, CASES.filter((f) => f.due12).length);
    expectRate(o.completeness.find((c) => c.months === 24)!.rate, seen24, CASES.filter((f) => f.due24).length);
    expect([seen12, seen24]).toEqual([4, 3]); // the fixture's own arithmetic
    expect(o.warning).toBe(false); // 80% and 75%
    // success at 12 and 24 months and at the latest review ≥ 1 year, with best / worst case
    for (const [at, pick, due] of [
      [12, (f: FixtureCase) => f.at12, (f: FixtureCase) => f.due12],
      [24, (f: FixtureCase) => f.at24, (f: FixtureCase) => f.due24],
      ['latest', (f: FixtureCase) => f.latest, (f: FixtureCase) => f.due12],
    ] as const) {
      const e = expectedSuccess(CASES, pick, due);
      const got = o.success.find((s) => s.at === at)!;
      expectRate(got.strict, e.strict, e.n);
      expectRate(got.lenient, e.lenient, e.n);
      expect([got.missing, got.uncertain]).toEqual([e.missing, e.uncertain]);
      expect(got.strictBounds.best).toBeCloseTo((e.strict + e.missing) / (e.n + e.missing), 12);
      expect(got.strictBounds.worst).toBeCloseTo(e.strict / (e.n + e.missing), 12);
    }
    // hand check of the scoring: at 12 months A healed, B healing (smaller lesion), C uncertain (unchanged before 365 days), D healed
    expect(expectedSuccess(CASES, (f) => f.at12, (f) => f.due12)).toEqual({ n: 3, strict: 2, lenient: 3, missing: 1, uncertain: 1 });
    // at 48 months no case is due; only B's extraction (found at 740 days, before the window ends) is known: a failure
    const at48 = o.success.find((s) => s.at === 48)!;
    expectRate(at48.strict, 0, 1);
    expect(at48.missing).toBe(0);
    // tooth survival: Kaplan–Meier (event at the review that found it) and Turnbull, lib/stats on the fixture's intervals
    const intervals = toothIntervals(CASES);
    expect(intervals.find((_, i) => CASES[i]!.key === 'B')).toEqual({ left: 370, right: 740 });
    const km = kaplanMeier(intervals.map((i) => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true })));
    const tb = turnbull(intervals);
    for (const s of o.survival) {
      const k = [...km].reverse().find((r) => r.time <= s.days);
      expect(s.km.survival).toBeCloseTo(k?.survival ?? 1, 12);
      expect(s.km.lower).toBeCloseTo(k?.lower ?? 1, 12);
      const t = [...tb].reverse().find((r) => r.upper <= s.days);
      expect(s.turnbull).toBeCloseTo(t?.survival ?? 1, 12);
    }
    expect(o.survival.find((s) => s.years === 1)!.km.survival).toBe(1);
    expect(o.survival.find((s) => s.years === 4)!.km.survival).toBeLessThan(1);
    expect(o.toothLossEvents).toBe(1);
  });

  it('filters change the rows as stated: period, clinician, kind', async () => {
    const byCleo = await outcomesOverview(services.em(), world.auditor, { clinician: world.clinician2.userId });
    expect(byCleo.overview.cases).toBe(CASES.filter((f) => f.who === 'cleo').length);
    const cleoCases = CASES.filter((f) => f.who === 'cleo');
    const e = expectedSuccess(cleoCases, (f) => f.latest, (f) => f.due12);
    expectRate(byCleo.overview.success.find((s) => s.at === 'latest')!.strict, e.strict, e.n);

    const retreat = await outcomesOverview(services.em(), world.auditor, { kind: 'nonsurgical_retreatment' });
    expect(retreat.overview.cases).toBe(1);
    const recent = await outcomesOverview(services.em(), world.auditor, { from: addMonthsClamped(today, -20) });
    expect(recent.overview.cases).toBe(CASES.filter((f) => f.monthsBack <= 20).length);
    const old = await outcomesOverview(services.em(), world.auditor, { to: addMonthsClamped(today, -20) });
    expect(old.overview.cases).toBe(CASES.filter((f) => f.monthsBack > 20).length);
    await expect(outcomesOverview(services.em(), world.auditor, { from: today, to: addDaysTo(today, -1) })).rejects.toMatchObject({ status: 422 });
    await expect(outcomesOverview(services.em(), world.auditor, { kind: 'haircut' })).rejects.toMatchObject({ status: 422 });
  });

  it('a clinician sees only their own cases (whatever clinician they ask for), plus the practice overall', async () => {
    const r = await outcomesOverview(services.em(), world.clinician, { clinician: world.clinician2.userId });
    expect(r.own).toBe(true);
    expect(r.filter.clinician).toBe(world.clinician.userId);
    expect(r.overview.cases).toBe(CASES.filter((f) => f.who === 'cal').length);
    expect(r.practice?.cases).toBe(CASES.length);
    expect(r.clinicians.map((c) => c.id)).toEqual([world.clinician.userId]);
    const mine = CASES.filter((f) => f.who === 'cal');
    const e = expectedSuccess(mine, (f) => f.at12, (f) => f.due12);
    expectRate(r.overview.success.find((s) => s.at === 12)!.strict, e.strict, e.n);
  });

  it('other roles are refused', async () => {
    await expect(outcomesOverview(services.em(), world.coordinator, {})).rejects.toMatchObject({ status: 403 });
    await expect(outcomesOverview(services.em(), world.admin, {})).rejects.toMatchObject({ status: 403 });
  });
});

describe('outcomes by factor (issue 12, item 2)', () => {
  it('strict success per kind with Wilson intervals and Fisher’s exact test equal lib/stats on the fixture rows', async () => {
    const r = await outcomesByFactor(services.em(), world.auditor, { factor: 'kind' });
    const levels = new Map(r.table.levels.map((l) => [l.level, l]));
    const table: [number, number][] = [];
    for (const [kind, label] of [
      ['primary_treatment', 'Primary root canal treatment'],
      ['nonsurgical_retreatment', 'Non-surgical retreatment'],
    ] as const) {
      const group = CASES.filter((f) => f.kind === kind);
      const e = expectedSuccess(group, (f) => f.latest, (f) => f.due12);
      const got = levels.get(label)!;
      expect(got.cases).toBe(group.length);
      expectRate(got.strict, e.strict, e.n);
      expectRate(got.lenient, e.lenient, e.n);
      table.push([e.strict, e.n - e.strict]);
    }
    expect(table).toEqual([
      [2, 1],
      [0, 1],
    ]);
    expect(r.table.test?.method).toBe('fisher');
    expect(r.table.test?.pValue).toBeCloseTo(fisherExact2x2([table[0]!, table[1]!]).pValue, 12);
  });

  it('the clinician factor names the clinicians; a bad factor is a 422', async () => {
    const r = await outcomesByFactor(services.em(), world.auditor, { factor: 'clinician' });
    expect(r.table.levels.map((l) => l.cases).sort()).toEqual([3, 3]);
    expect(r.table.levels.some((l) => /^[0-9a-f-]{36}$/.test(l.level))).toBe(false);
    await expect(outcomesByFactor(services.em(), world.auditor, { factor: 'horoscope' })).rejects.toMatchObject({ status: 422 });
  });

  it('a past clinician (no longer a clinician of the practice) who treated cases is still listed and named', async () => {
    const knex = services.orm.em.getKnex();
    const who = { user_id: world.clinician2.userId, practice_id: world.practice.id };
    const names = (r: { clinicians: { id: string; name: string }[] }) => r.clinicians.map((c) => c.id).sort();
    const both = [world.clinician.userId, world.clinician2.userId].sort();
    expect(names(await outcomesByFactor(services.em(), world.auditor, { factor: 'clinician' }))).toEqual(both);
    await knex('membership').where({ ...who, role: 'clinician' }).update({ role: 'coordinator' });
    try {
      const r = await outcomesByFactor(services.em(), world.auditor, { factor: 'clinician' });
      expect(names(r)).toEqual(both);
      expect(r.table.levels.map((l) => l.level)).not.toContain('Former clinician');
    } finally {
      await knex('membership').where({ ...who, role: 'coordinator' }).update({ role: 'clinician' });
    }
  });

  it('downloads each table through the one CSV writer, audited', async () => {
    const csv = await outcomesCsv(services.em(), world.auditor, 'factor', { factor: 'kind' });
    expect(csv.split('\r\n')[0]).toMatch(/^Treatment kind,Cases,Strict: successes/);
    expect(csv).toContain('Primary root canal treatment,5,2,3,');
    const overview = await outcomesCsv(services.em(), world.clinician, 'overview', {});
    expect(overview).toContain('Cases followed,,,,,3,');
    const knex = services.orm.em.getKnex();
    const actions = (await knex('audit_event').where({ practice_id: world.practice.id }).select('action')).map((a: { action: string }) => a.action);
    expect(actions).toEqual(expect.arrayContaining(['outcomes.overview_read', 'outcomes.factor_read', 'outcomes.exported']));
  });

  it('a CSV download is one audit event, the download with its filter (as the funnel, model and worklist CSVs)', async () => {
    const knex = services.orm.em.getKnex();
    const count = async () => Number(((await knex('audit_event').where({ practice_id: world.practice.id }).count('* as n')) as { n: string }[])[0]!.n);
    for (const [view, raw, extra] of [
      ['overview', { kind: 'primary_treatment' }, {}],
      ['factor', { factor: 'kind', kind: 'primary_treatment' }, { factor: 'kind' }],
      ['curves', { kind: 'primary_treatment', endpoint: 'tooth' }, { endpoint: 'tooth' }],
    ] as const) {
      const before = await count();
      await outcomesCsv(services.em(), world.auditor, view, raw);
      expect(await count(), view).toBe(before + 1);
      const last = (await knex('audit_event').where({ practice_id: world.practice.id }).orderBy('at', 'desc').first('action', 'detail')) as { action: string; detail: Record<string, unknown> };
      expect(last).toMatchObject({ action: 'outcomes.exported', detail: { view, kind: 'primary_treatment', ...extra } });
    }
  });
});

describe('survival curves (issue 12, item 3)', () => {
  const km = (ints: { left: number; right: number | null }[]) => kaplanMeier(ints.map((i) => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true })));
  const healing = (f: FixtureCase) =>
    caseObservations(recordedHistory({ completionDate: completion.get(f.key)!, baselinePai: f.pai }, f.reviews.map((_, i) => recorded(f, i))), { minObservationDays: 365 }).healing;

  it('Turnbull by default, Kaplan–Meier on request: each equals lib/stats on the fixture intervals, with numbers at risk', async () => {
    const t = await outcomesCurves(services.em(), world.auditor, { endpoint: 'tooth' });
    expect(t.curves.method).toBe('turnbull');
    const ints = toothIntervals(CASES);
    const tb = turnbull(ints);
    expect(t.curves.curves[0]!.points.slice(1).map((p) => [p.time, p.survival])).toEqual(tb.map((r) => [r.upper, r.survival]));
    // still followed at 0/6/12/24/36/48 months (days 0, 183, 365, 731, 1096, 1461): (right ?? left) ≥ t
    expect(t.curves.curves[0]!.atRisk).toEqual([0, 183, 365, 731, 1096, 1461].map((d) => ints.filter((i) => (i.right ?? i.left) >= d).length));
    const k = await outcomesCurves(services.em(), world.auditor, { endpoint: 'tooth', method: 'km' });
    const expected = km(ints);
    expect(k.curves.curves[0]!.points.slice(1).map((p) => [p.time, p.survival, p.lower, p.upper])).toEqual(expected.map((r) => [r.time, r.survival, r.lower, r.upper]));
  });

  it('per level: the log-rank test equals lib/stats logRank on the fixture’s healing intervals; competing events equal cumulativeIncidence', async () => {
    const r = await outcomesCurves(services.em(), world.auditor, { endpoint: 'healing', method: 'km', factor: 'kind' });
    const groups = Object.fromEntries(
      (['primary_treatment', 'nonsurgical_retreatment'] as const).map((kind) => [
        kind,
        CASES.filter((f) => f.kind === kind).map(healing).map((i) => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true })),
      ]),
    );
    const lr = logRank(groups);
    expect(r.curves.logRank?.pValue).toBeCloseTo(lr.pValue, 12);
    expect(r.curves.curves.map((c) => [c.level, c.n])).toEqual([['Primary root canal treatment', 5], ['Non-surgical retreatment', 1]]); // the kinds' own order
    // competing events: B extracted at 740 days; the others censored at their last review (0 without one)
    const rows = CASES.map((f) => (f.key === 'B' ? { time: 740, cause: 'extraction' } : { time: f.reviews.length ? f.reviews[f.reviews.length - 1]!.day : 0, cause: null }));
    const ci = cumulativeIncidence(rows);
    expect(r.curves.competing.map((c) => c.cause)).toEqual(['extraction']);
    expect(r.curves.competing[0]!.points.map((p) => p.incidence)).toEqual(ci.extraction!.map((s) => s.incidence));
    expect(r.curves.logRank?.method).toMatch(/^log-rank test \(Mantel–Haenszel/);
    expect(r.curves.logRank?.stratum).toBeNull();
  });

  it('a stratum makes the log-rank test stratified (lib/stats logRank with strata, as R survdiff + strata()); median and RMST per level equal lib/stats', async () => {
    const withStratum = (level: (f: FixtureCase) => string) =>
      Object.fromEntries(
        (['primary_treatment', 'nonsurgical_retreatment'] as const).map((kind) => [
          kind,
          CASES.filter((f) => f.kind === kind).map((f) => {
            const i = healing(f);
            return { time: i.right ?? i.left, event: i.right !== null, stratum: level(f) };
          }),
        ]),
      );
    // by year of treatment: the cases treated 32 months ago (A, B, C, E) compare the kinds at days 720 and 740
    const r = await outcomesCurves(services.em(), world.auditor, { endpoint: 'healing', method: 'km', factor: 'kind', stratum: 'year' });
    const lr = logRank(withStratum((f) => completion.get(f.key)!.slice(0, 4)));
    expect(r.curves.stratum).toBe('year');
    expect(r.curves.logRank?.method).toMatch(/^stratified log-rank test .*by year of treatment/);
    expect(r.curves.logRank?.chiSquare).toBeCloseTo(lr.chiSquare, 12);
    expect(r.curves.logRank?.pValue).toBeCloseTo(lr.pValue, 12);
    // by clinician: Cal treated only primary cases and Cleo's two kinds never share an event time with
    // both at risk, so the stratified test has no information (lib/stats throws) and the screen says so;
    // without the stratum the same levels have a test
    expect(() => logRank(withStratum((f) => f.who))).toThrow(RangeError);
    const byClinician = await outcomesCurves(services.em(), world.auditor, { endpoint: 'healing', method: 'km', factor: 'kind', stratum: 'clinician' });
    expect(byClinician.curves.logRank).toBeNull();
    expect(byClinician.curves.logRankNote).toMatch(/No stratified log-rank test: within no clinician group/);
    // median (with R's interval) and the restricted mean to 48 months, per level, from the level's Kaplan–Meier curve
    for (const [kind, level] of [['primary_treatment', 'Primary root canal treatment'], ['nonsurgical_retreatment', 'Non-surgical retreatment']] as const) {
      const steps = km(CASES.filter((f) => f.kind === kind).map(healing));
      const got = r.curves.curves.find((c) => c.level === level)!;
      expect(got.median).toEqual(medianSurvival(steps));
      expect(got.rmst).toEqual(steps[steps.length - 1]!.time >= 1461 ? restrictedMeanInterval(steps, 1461) : null);
    }
    // the stratum cannot be the split factor
    await expect(outcomesCurves(services.em(), world.auditor, { factor: 'kind', stratum: 'kind' })).rejects.toMatchObject({ fieldErrors: { stratum: [expect.any(String)] } });
  });
});

describe('the new factors and level filters (issue 12, items 2 and 8)', () => {
  const latestOutcome = (f: FixtureCase) => outcome(f, f.latest);
  const healingObs = (f: FixtureCase) => {
    const i = caseObservations(recordedHistory({ completionDate: completion.get(f.key)!, baselinePai: f.pai }, f.reviews.map((_, j) => recorded(f, j))), { minObservationDays: 365 }).healing;
    return i.right === null ? { time: i.left, event: false } : { time: i.right, event: true };
  };

  it('by density (voids): levels with Wilson intervals and Fisher’s exact test equal lib/stats on the fixture rows; not recorded is its own level', async () => {
    const r = await outcomesByFactor(services.em(), world.auditor, { factor: 'density' });
    const groups = [
      ['homogeneous', 'Homogeneous (no voids)', CASES.filter((f) => f.density === 'homogeneous')],
      ['voids', 'Voids seen', CASES.filter((f) => f.density === 'voids')],
      ['not_recorded', 'Not recorded', CASES.filter((f) => f.density === undefined)],
    ] as const;
    expect(r.table.levels.map((l) => [l.code, l.level, l.cases])).toEqual(groups.map(([code, label, g]) => [code, label, g.length]));
    const table: [number, number][] = [];
    for (const [code, , g] of groups) {
      const e = expectedSuccess(g, (f) => f.latest, (f) => f.due12);
      const got = r.table.levels.find((l) => l.code === code)!;
      expectRate(got.strict, e.strict, e.n);
      expectRate(got.lenient, e.lenient, e.n);
      if (e.n > 0) table.push([e.strict, e.n - e.strict]);
    }
    // the fixture's own arithmetic: A healed (homogeneous; E and F have no review); B extracted and C unchanged at two years (voids); D healed (not recorded)
    expect(table).toEqual([[1, 0], [0, 2], [1, 0]]);
    expect(r.table.test?.method).toBe('chi-square');
    // the survival curves per level: log-rank equals lib/stats logRank on the fixture's own healing observations
    expect(r.curves.curves.map((c) => [c.level, c.n])).toEqual(groups.map(([, label, g]) => [label, g.length]));
    const lr = logRank(Object.fromEntries(groups.map(([code, , g]) => [code, g.map(healingObs)])));
    expect(r.curves.logRank?.pValue).toBeCloseTo(lr.pValue, 12);
    expect(r.curves.logRank?.df).toBe(lr.df);
    for (const [i, [, , g]] of groups.entries()) {
      const ints = g.map((f) => caseObservations(recordedHistory({ completionDate: completion.get(f.key)!, baselinePai: f.pai }, f.reviews.map((_, j) => recorded(f, j))), { minObservationDays: 365 }).healing);
      expect(r.curves.curves[i]!.atRisk).toEqual([0, 183, 365, 731, 1096, 1461].map((d) => ints.filter((x) => (x.right ?? x.left) >= d).length));
      expect(r.curves.curves[i]!.points.slice(1).map((p) => [p.time, p.survival])).toEqual(turnbull(ints).map((t) => [t.upper, t.survival]));
    }
  });

  it('sealer, complications, definitive restoration and referrer: the levels the fixture defines; referrers named for the lead and a clinician', async () => {
    const sealer = await outcomesByFactor(services.em(), world.auditor, { factor: 'sealer' });
    expect(sealer.table.levels.map((l) => [l.level, l.cases])).toEqual([
      ['Epoxy resin', 3],
      ['Calcium silicate (bioceramic)', 2],
      ['Not recorded', 1],
    ]);
    const comp = await outcomesByFactor(services.em(), world.auditor, { factor: 'complications' });
    expect(comp.table.levels.map((l) => [l.level, l.cases])).toEqual([
      ['None recorded', 5],
      ['Separated instrument', 1],
    ]);
    const e = expectedSuccess(CASES.filter((f) => !f.complications?.length), (f) => f.latest, (f) => f.due12);
    expectRate(comp.table.levels[0]!.strict, e.strict, e.n);
    const def = await outcomesByFactor(services.em(), world.auditor, { factor: 'definitive' });
    expect(def.table.levels.map((l) => [l.level, l.cases])).toEqual([
      ['Crown', 1],
      ['None recorded', 5],
    ]);
    const ref = await outcomesByFactor(services.em(), world.auditor, { factor: 'referrer' });
    expect(ref.table.levels.map((l) => [l.level, l.cases])).toEqual([
      ['Hazel Dental Studio', 2],
      ['Quarry Lane Dentistry', 2],
      ['No referrer recorded', 2],
    ]);
    expect(ref.curves.curves.map((c) => c.level)).toEqual(['Hazel Dental Studio', 'Quarry Lane Dentistry', 'No referrer recorded']);
    // a clinician (patient.read: sees the referrer on each case) sees the names too, for their own cases only
    const mine = await outcomesByFactor(services.em(), world.clinician, { factor: 'referrer' });
    expect(mine.table.levels.map((l) => [l.level, l.cases])).toEqual([
      ['Hazel Dental Studio', 2],
      ['Quarry Lane Dentistry', 1],
    ]);
    expect(latestOutcome(CASES[0]!)).toBe('healed');
  });

  it('level filters change the rows as stated, in every view, and the figures equal the engine on those rows', async () => {
    const voids = CASES.filter((f) => f.density === 'voids');
    const o = await outcomesOverview(services.em(), world.auditor, { 'f.density': 'voids' });
    expect(o.filter.levels).toEqual({ density: ['voids'] });
    expect(o.overview.cases).toBe(voids.length);
    const e = expectedSuccess(voids, (f) => f.latest, (f) => f.due12);
    expectRate(o.overview.success.find((s) => s.at === 'latest')!.strict, e.strict, e.n);
    const km = kaplanMeier(toothIntervals(voids).map((i) => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true })));
    for (const sv of o.overview.survival) expect(sv.km.survival).toBeCloseTo([...km].reverse().find((k) => k.time <= sv.days)?.survival ?? 1, 12);

    // any of the levels within a factor, every factor named; with the kind filter too
    const molarsOrPremolars = await outcomesOverview(services.em(), world.auditor, { 'f.group': 'molar,premolar', 'f.sealer': 'epoxy_resin' });
    expect(molarsOrPremolars.overview.cases).toBe(CASES.filter((f) => [36, 46, 37, 24, 15].includes(f.tooth) && f.sealer === 'epoxy_resin').length); // A, C, E
    expect(molarsOrPremolars.overview.cases).toBe(3);
    const primaryVoids = await outcomesByFactor(services.em(), world.auditor, { factor: 'kind', kind: 'primary_treatment', 'f.density': 'voids' });
    expect(primaryVoids.table.levels.map((l) => [l.level, l.cases])).toEqual([['Primary root canal treatment', 1]]); // B
    const notRecorded = await outcomesCurves(services.em(), world.auditor, { endpoint: 'tooth', 'f.sealer': 'not_recorded' });
    expect(notRecorded.curves.curves[0]!.n).toBe(1); // D
    // a clinician's level filter still sees only their own cases
    const mine = await outcomesOverview(services.em(), world.clinician, { 'f.referrer': referrerIds.get('r2')! });
    expect(mine.overview.cases).toBe(CASES.filter((f) => f.who === 'cal' && f.referrer === 'r2').length); // E
    expect(mine.practice?.cases).toBe(CASES.filter((f) => f.referrer === 'r2').length); // C and E
    const none = await outcomesOverview(services.em(), world.auditor, { 'f.referrer': 'none' });
    expect(none.overview.cases).toBe(CASES.filter((f) => !f.referrer).length);

    // the CSV carries the filter; the audit trail names it
    const csv = await outcomesCsv(services.em(), world.auditor, 'factor', { factor: 'sealer', 'f.density': 'voids' });
    expect(csv).toContain('Epoxy resin,1,');
    expect(csv).toContain('Calcium silicate (bioceramic),1,');
    expect(csv).not.toContain('Not recorded');
    const knex = services.orm.em.getKnex();
    const details = (await knex('audit_event').where({ practice_id: world.practice.id, action: 'outcomes.overview_read' }).select('detail')).map((a: { detail: Record<string, unknown> }) => a.detail);
    expect(details).toEqual(expect.arrayContaining([expect.objectContaining({ 'f.density': 'voids' })]));
  });

  it('a bad level filter is a 422 naming the URL key', async () => {
    await expect(outcomesOverview(services.em(), world.auditor, { 'f.group': 'wisdom' })).rejects.toMatchObject({ status: 422, fieldErrors: { 'f.group': [expect.stringContaining('not a level of tooth group')] } });
    await expect(outcomesByFactor(services.em(), world.auditor, { factor: 'kind', 'f.shoe': 'size' })).rejects.toMatchObject({ status: 422 });
    await expect(outcomesCurves(services.em(), world.auditor, { 'f.clinician': world.clinician.userId })).rejects.toMatchObject({ status: 422 });
  });
});
