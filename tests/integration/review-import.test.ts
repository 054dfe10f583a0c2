import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { randomBytes } from 'node:crypto';
import type { Redis } from 'ioredis';
import { AuditEventSchema } from '@/entities';
import { historyWorkbook, historyWorld, type HistoryCase } from '@/lib/demo/history-file';
import { curves, overview, type OutcomeCase } from '@/lib/outcomes';
import { connectionForWorker, type RemindersQueue } from '@/lib/queue';
import { planVisits } from '@/lib/recall/plan';
import { DEFAULT_RECALL_POLICY } from '@/lib/schemas/recall-policy';
import { REVIEW_COLUMN_KEYS } from '@/lib/registry/review-csv';
import { assessRecordedReview } from '@/lib/scoring';
import { importCases } from '@/lib/services/import';
import { importReviews, type ReviewImportResult } from '@/lib/services/import-reviews';
import { outcomesCurves, outcomesOverview } from '@/lib/services/outcomes';
import { openReminderQueue, reminderQueueSettings } from '@/lib/services/recall-outbox';
import { todayIn } from '@/lib/services/registry-common';
import { runRecallScan } from '@/jobs/recall-scan';
import { makeRegistryPractice, openServices, resetData } from '../support/db';

/**
 * Issue 16: past reviews and visits. An invented world of 200 past cases and 400 reviews
 * (lib/demo/history-file.ts), imported through the case import and then the review import in
 * the template's CSV form. The figures the outcomes service answers must equal a direct engine
 * call (lib/outcomes overview and curves, which use lib/scoring and lib/stats) on the rows the
 * FIXTURE defines — not on what was stored; the visits are checked against the rule the test
 * states below; the recall scan queues nothing for a visit already due at the import.
 */
const services = await openServices();
const prefix = `lamina-test-revimport-${randomBytes(3).toString('hex')}`;
let connection: Redis;
let queue: RemindersQueue;
const today = todayIn('Europe/London');
const knex = () => services.em().getKnex();

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  connection = connectionForWorker(process.env.REDIS_URL!, { name: 'test-revimport' });
  queue = openReminderQueue(connection, reminderQueueSettings({ QUEUE_PREFIX: prefix }));
});
afterAll(async () => {
  await queue.obliterate({ force: true });
  await queue.close();
  connection.disconnect();
  await services.close();
});

/** The engine's rows for the fixture's cases (`ids`: the operator e-mail → the clinician's user id). */
function fixtureRows(cases: readonly HistoryCase[], ids: ReadonlyMap<string, string>): OutcomeCase[] {
  return cases.map((c, i) => ({
    id: `case-${i}`,
    patientId: c.registryNumber,
    operatorId: ids.get(c.operatorEmail)!,
    kind: 'primary_treatment',
    completionDate: c.completionDate,
    baselinePai: c.baselinePai,
    lesionDiameterMm: c.lesionMm,
    fillLengthClass: null,
    toothGroup: 'molar',
    toothArch: 'lower',
    previousCaseId: null,
    openVisit: false,
    reviews: c.reviews.map((r) => ({ reviewDate: r.reviewDate, toothStatus: r.toothStatus, paiScore: r.paiScore, signs: r.signs, eventDate: r.eventDate })),
  }));
}

/**
 * The deep equality of two figures to 8 decimals (5 for Turnbull's estimates): the row order (the
 * service reads by completion date and id) moves the last bits of floating sums, and Turnbull's EM
 * stops at a tolerance of 1e-7 on its self-consistency conditions (lib/stats/turnbull.ts), so the
 * order it meets the intervals in moves its estimates by about that much.
 */
function expectClose(got: unknown, want: unknown, path = '$'): void {
  if (typeof want === 'number' && typeof got === 'number') {
    expect(got, path).toBeCloseTo(want, path.includes('turnbull') ? 5 : 8);
    return;
  }
  if (want && typeof want === 'object') {
    expect(got && typeof got === 'object', path).toBe(true);
    const keys = new Set([...Object.keys(want), ...Object.keys(got as object)]);
    for (const k of keys) expectClose((got as Record<string, unknown>)[k], (want as Record<string, unknown>)[k], `${path}.${k}`);
    return;
  }
  expect(got, path).toEqual(want);
}

describe('review import: a 200-case, 400-review history', () => {
  let world: Awaited<ReturnType<typeof makeRegistryPractice>>;
  let h: ReturnType<typeof historyWorld>;
  let committed: ReviewImportResult;

  beforeAll(async () => {
    world = await makeRegistryPractice(services.em(), 'hist');
    h = historyWorld({ seed: 16, cases: 200, today, clinicians: ['cal@hist.test', 'cleo@hist.test'] });
    const cases = await importCases(services.em(), world.coordinator, { mode: 'commit', csv: h.caseCsv });
    expect(cases.errors).toEqual([]);
    expect(cases.committed).toBe(true);
  }, 120_000);

  it('the dry run finds every row clean and writes nothing; the commit writes 400 reviews in one go, with streamed progress and an audit event', async () => {
    expect(h.cases.length).toBe(200);
    expect(h.cases.reduce((n, c) => n + c.reviews.length, 0)).toBe(400);
    const dry = await importReviews(services.em(), world.coordinator, { mode: 'dry-run', csv: h.reviewCsv });
    expect(dry.errors).toEqual([]);
    expect(dry.summary).toMatchObject({ rows: 400, validRows: 400, reviews: 400, cases: 200, duplicates: 0 });
    expect(Number((await knex()('review').count('* as n'))[0]!.n)).toBe(0);
    const progress: { phase: string; done: number; total: number }[] = [];
    committed = await importReviews(services.em(), world.coordinator, { mode: 'commit', csv: h.reviewCsv }, { onProgress: (p) => void progress.push(p) });
    expect(committed.committed).toBe(true);
    expect(Number((await knex()('review').count('* as n'))[0]!.n)).toBe(400);
    expect(progress.some((p) => p.phase === 'check')).toBe(true);
    expect(progress.at(-1)).toMatchObject({ phase: 'insert' });
    expect(progress.at(-1)!.done).toBe(progress.at(-1)!.total);
    const actions = (await services.em().find(AuditEventSchema, { action: { $like: 'review.import%' } }, { orderBy: { at: 'asc' } })).map((e) => e.action);
    expect(actions).toEqual(['review.import_checked', 'review.imported']);
  });

  it('stores the outcome the scoring rules give for each fixture row (never from the file)', async () => {
    const stored = (await knex()('review as r')
      .join('treatment_case as c', 'c.id', 'r.case_id')
      .join('patient as p', 'p.id', 'c.patient_id')
      .select('p.registry_number', 'c.tooth', knex().raw('r.review_date::text as review_date'), 'r.outcome')) as { registry_number: string; tooth: number; review_date: string; outcome: string }[];
    const byKey = new Map(stored.map((s) => [`${s.registry_number}|${s.tooth}|${s.review_date}`, s.outcome]));
    for (const c of h.cases) {
      for (const r of c.reviews) {
        const expected = assessRecordedReview({ completionDate: c.completionDate, baselinePai: c.baselinePai }, r, 365).outcome;
        expect(byKey.get(`${c.registryNumber}|${c.tooth}|${r.reviewDate}`)).toBe(expected);
      }
    }
  });

  it('healing and survival figures from the outcomes service equal lib/outcomes on the fixture’s own rows', async () => {
    const ids = new Map([
      ['cal@hist.test', world.clinician.userId],
      ['cleo@hist.test', world.clinician2.userId],
    ]);
    const rows = fixtureRows(h.cases, ids);
    const got = await outcomesOverview(services.em(), world.auditor, {});
    const want = overview(rows, rows, today, 365);
    expect(want.cases).toBe(200);
    expect(want.toothLossEvents).toBeGreaterThan(0);
    expect(got.overview.success.find((s) => s.at === 'latest')!.strict.n).toBeGreaterThan(100);
    expectClose(got.overview, want);
    for (const endpoint of ['healing', 'tooth'] as const) {
      for (const method of ['km', 'turnbull'] as const) {
        const c = await outcomesCurves(services.em(), world.auditor, { endpoint, method });
        expectClose(c.curves, curves(rows, rows, { endpoint, method, factor: null, minObs: 365 }), `${endpoint}/${method}`);
      }
    }
  });

  it('visits: attended when a review falls in the window, cancelled after an extraction or retreatment, missed when the window ended, else planned — and then the plan goes on', async () => {
    // The rule, stated here (default recall policy: 6, 12, 24 months):
    const expected = (c: HistoryCase) => {
      const used = new Set<string>();
      const terminal = c.reviews.find((r) => r.toothStatus !== 'present');
      return planVisits(c.completionDate, DEFAULT_RECALL_POLICY).map((v) => {
        const r = c.reviews.find((x) => !used.has(x.reviewDate) && v.windowStart <= x.reviewDate && x.reviewDate <= v.windowEnd);
        if (r) {
          used.add(r.reviewDate);
          return 'attended';
        }
        if (terminal && v.windowStart > terminal.reviewDate) return 'cancelled';
        return v.windowEnd < today ? 'missed' : 'planned';
      });
    };
    const stored = (await knex()('recall_visit as v')
      .join('treatment_case as c', 'c.id', 'v.case_id')
      .join('patient as p', 'p.id', 'c.patient_id')
      .orderBy('v.milestone')
      .select('p.registry_number', 'c.tooth', 'v.status', 'v.auto_reminders', knex().raw('v.due_date::text as due_date'))) as {
      registry_number: string;
      tooth: number;
      status: string;
      auto_reminders: boolean;
      due_date: string;
    }[];
    const byCase = new Map<string, typeof stored>();
    for (const s of stored) byCase.set(`${s.registry_number}|${s.tooth}`, [...(byCase.get(`${s.registry_number}|${s.tooth}`) ?? []), s]);
    const tally: Record<string, number> = {};
    for (const c of h.cases) {
      const got = byCase.get(`${c.registryNumber}|${c.tooth}`)!;
      const want = expected(c);
      expect(got.map((v) => v.status), c.registryNumber).toEqual(want);
      for (const s of want) tally[s] = (tally[s] ?? 0) + 1;
      // a visit already due at the import gets no automatic reminder; the ones ahead keep them
      for (const v of got) if (v.status === 'planned') expect(v.auto_reminders).toBe(v.due_date >= today);
    }
    // the fixture exercises every branch
    expect(Object.keys(tally).sort()).toEqual(['attended', 'cancelled', 'missed', 'planned']);
    expect(committed.summary.visitsAttended).toBe(tally.attended);
    // attended visits carry their review
    const linked = Number((await knex()('review').whereNotNull('visit_id').count('* as n'))[0]!.n);
    expect(linked).toBe(tally.attended);
  });

  it('the recall scan queues no reminder for a visit already due at the import (and would, when asked)', async () => {
    const quiet = (await knex()('recall_visit').where({ auto_reminders: false, status: 'planned' }).select('id')) as { id: string }[];
    expect(quiet.length).toBeGreaterThan(0);
    await runRecallScan({ em: () => services.em(), queue }, { practiceId: world.practice.id });
    const reminded = (await knex()('reminder as r').join('recall_visit as v', 'v.id', 'r.visit_id').select(knex().raw('v.due_date::text as due_date'), 'v.id')) as { due_date: string; id: string }[];
    expect(reminded.filter((r) => r.due_date < today)).toEqual([]);
    // the control: the coordinator's option (auto reminders on) — the scan does remind such a visit
    await knex()('recall_visit').where({ id: quiet[0]!.id }).update({ auto_reminders: true });
    await runRecallScan({ em: () => services.em(), queue }, { practiceId: world.practice.id });
    expect(Number((await knex()('reminder').where({ visit_id: quiet[0]!.id }).count('* as n'))[0]!.n)).toBe(1);
  });

  it('importing the same file again adds nothing: every row is a duplicate, reported', async () => {
    const again = await importReviews(services.em(), world.coordinator, { mode: 'commit', csv: h.reviewCsv });
    expect(again.errors).toEqual([]);
    expect(again.summary).toMatchObject({ duplicates: 400, reviews: 0 });
    expect(again.committed).toBe(false);
    expect(Number((await knex()('review').count('* as n'))[0]!.n)).toBe(400);
  });
});

describe('review import: a messy .xlsx of the same history (own headers, DD/MM/YYYY, decimal commas)', () => {
  it('imports fully with the mapping step’s choices, and the figures equal lib/outcomes on the fixture rows', async () => {
    await resetData(services.orm, services.redis);
    const world = await makeRegistryPractice(services.em(), 'xlsx');
    const h = historyWorld({ seed: 16, cases: 200, today, clinicians: ['cal@xlsx.test', 'cleo@xlsx.test'] });
    expect((await importCases(services.em(), world.coordinator, { mode: 'commit', csv: h.caseCsv })).committed).toBe(true);
    const { bytes, options } = await historyWorkbook(h.reviewCells);
    const dry = await importReviews(services.em(), world.coordinator, { mode: 'dry-run', file: bytes, options });
    expect(dry.errors).toEqual([]);
    expect(dry.summary).toMatchObject({ rows: 400, validRows: 400 });
    const done = await importReviews(services.em(), world.coordinator, { mode: 'commit', file: bytes, options });
    expect(done.committed).toBe(true);
    const ids = new Map([
      ['cal@xlsx.test', world.clinician.userId],
      ['cleo@xlsx.test', world.clinician2.userId],
    ]);
    const rows = fixtureRows(h.cases, ids);
    expectClose((await outcomesOverview(services.em(), world.auditor, {})).overview, overview(rows, rows, today, 365));
    const tooth = await outcomesCurves(services.em(), world.auditor, { endpoint: 'tooth', method: 'km' });
    expectClose(tooth.curves, curves(rows, rows, { endpoint: 'tooth', method: 'km', factor: null, minObs: 365 }));
    // a lesion written 2,5 is stored as 2.5
    const lesions = (await knex()('review').whereNotNull('lesion_diameter_mm').select('lesion_diameter_mm')) as { lesion_diameter_mm: string }[];
    expect(lesions.some((l) => Number(l.lesion_diameter_mm) % 1 !== 0)).toBe(true);
  }, 120_000);

  it('problems in the practice’s file name its own headers; an ambiguous date order is refused', async () => {
    const world = await makeRegistryPractice(services.em(), 'xlsx2');
    const h = historyWorld({ seed: 3, cases: 4, today, clinicians: ['cal@xlsx2.test'] });
    expect((await importCases(services.em(), world.coordinator, { mode: 'commit', csv: h.caseCsv })).committed).toBe(true);
    const cells = h.reviewCells.map((c) => ({ ...c }));
    cells[0]!.pai = '9';
    const { bytes, options } = await historyWorkbook(cells);
    const r = await importReviews(services.em(), world.coordinator, { mode: 'dry-run', file: bytes, options });
    expect(r.errors.map((e) => [e.line, e.column])).toEqual([[2, 'PAI']]);
    const mdy = await importReviews(services.em(), world.coordinator, { mode: 'dry-run', file: bytes, options: { ...options, dateOrder: 'mdy' } });
    expect(mdy.errors.length).toBeGreaterThan(0);
    expect(mdy.summary.validRows).toBeLessThan(cells.length);
  });
});

describe('review import: problems, the valid rows only, the rejected rows as CSV', () => {
  it('a file with bad rows writes nothing; "import the valid rows" writes them and hands back the rejected ones with their reasons', async () => {
    await resetData(services.orm, services.redis);
    const world = await makeRegistryPractice(services.em(), 'part');
    const h = historyWorld({ seed: 7, cases: 6, today, clinicians: ['cal@part.test'] });
    expect((await importCases(services.em(), world.coordinator, { mode: 'commit', csv: h.caseCsv })).committed).toBe(true);
    const cells = h.reviewCells.map((c) => ({ ...c }));
    cells[1]!.registry_number = 'NOBODY';
    cells[3]!.pai = 'seven';
    cells[4]!.assessor_email = 'stranger@part.test';
    const csv = Papa.unparse({ fields: [...REVIEW_COLUMN_KEYS], data: cells.map((c) => REVIEW_COLUMN_KEYS.map((k) => c[k])) }, { newline: '\r\n' });

    const all = await importReviews(services.em(), world.coordinator, { mode: 'commit', csv });
    expect(all.committed).toBe(false);
    expect(all.errors.map((e) => [e.line, e.column])).toEqual([
      [3, 'registry_number'],
      [5, 'pai'],
      [6, 'assessor_email'],
    ]);
    expect(Number((await knex()('review').count('* as n'))[0]!.n)).toBe(0);

    const part = await importReviews(services.em(), world.coordinator, { mode: 'commit', csv, validRowsOnly: true });
    expect(part.committed).toBe(true);
    expect(part.summary).toMatchObject({ reviews: cells.length - 3, rejectedRows: 3 });
    expect(Number((await knex()('review').count('* as n'))[0]!.n)).toBe(cells.length - 3);
    const rejected = Papa.parse<Record<string, string>>(part.rejectedCsv!.trim(), { header: true }).data;
    expect(rejected.map((r) => [r.line, r.registry_number])).toEqual([
      ['3', 'NOBODY'],
      ['5', cells[3]!.registry_number],
      ['6', cells[4]!.registry_number],
    ]);
    expect(rejected[1]!.problems).toMatch(/^pai: .*not a number/);
    expect(rejected[2]!.problems).toMatch(/assessor_email: stranger@part\.test is not a clinician/);
    const audit = await services.em().findOne(AuditEventSchema, { action: 'review.imported' });
    expect(audit?.detail).toMatchObject({ reviews: cells.length - 3, rejectedRows: 3 });
  });

  it('the review import needs the case import permission', async () => {
    const world = await makeRegistryPractice(services.em(), 'perm');
    await expect(importReviews(services.em(), world.researcher, { mode: 'dry-run', csv: 'x' })).rejects.toMatchObject({ status: 403 });
    await expect(importReviews(services.em(), world.coordinator, { mode: 'dry-run', csv: '' })).rejects.toMatchObject({ status: 422 });
  });
});

describe('case import: the same choice, import the valid rows and download the rejected ones', () => {
  it('a file with a bad row writes nothing, unless the valid rows are asked for; the rejected rows come back with their reasons', async () => {
    await resetData(services.orm, services.redis);
    const world = await makeRegistryPractice(services.em(), 'cpart');
    const h = historyWorld({ seed: 5, cases: 4, today, clinicians: ['cal@cpart.test'] });
    const [header, ...rows] = Papa.parse<string[]>(h.caseCsv.trim()).data;
    rows[2]![header!.indexOf('tooth_fdi')] = '19';
    const csv = Papa.unparse({ fields: header!, data: rows }, { newline: '\r\n' });
    const all = await importCases(services.em(), world.coordinator, { mode: 'commit', csv });
    expect(all.committed).toBe(false);
    expect(all.errors.map((e) => [e.line, e.column])).toEqual([[4, 'tooth_fdi']]);
    expect(Number((await knex()('treatment_case').count('* as n'))[0]!.n)).toBe(0);
    const part = await importCases(services.em(), world.coordinator, { mode: 'commit', csv, validRowsOnly: true });
    expect(part.committed).toBe(true);
    expect(part.summary.cases).toBe(3);
    expect(Number((await knex()('treatment_case').count('* as n'))[0]!.n)).toBe(3);
    const rejected = Papa.parse<Record<string, string>>(part.rejectedCsv!.trim(), { header: true }).data;
    expect(rejected.map((r) => [r.line, r.registry_number, r.tooth_fdi])).toEqual([['4', rows[2]![0], '19']]);
    expect(rejected[0]!.problems).toMatch(/^tooth_fdi: /);
    const audit = await services.em().findOne(AuditEventSchema, { action: 'case.imported_valid_rows' });
    expect(audit?.detail).toMatchObject({ cases: 3, rejectedRows: 1 });
  });
});
