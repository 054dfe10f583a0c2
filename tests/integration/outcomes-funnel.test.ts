import { execFileSync } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDaysTo, addMonthsClamped } from '@/lib/registry/calendar-date';
import { funnelLimits, logisticRegression, wilsonInterval } from '@/lib/stats';
import { createCase } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { todayIn } from '@/lib/services/registry-common';
import { createReview } from '@/lib/services/reviews';
import { outcomesFunnel, outcomesFunnelCsv } from '@/lib/services/outcomes-funnel';
import { outcomesReportData, outcomesReportPdf, pageCount } from '@/lib/services/outcomes-report';
import { invalidateOutcomeCases } from '@/lib/services/outcomes-cache';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { completedOn } from '../support/outcome-cases';

/**
 * Issue 12, items 5 and 8: the clinician funnel and the printed report. Every figure equals a
 * direct engine call (lib/stats wilsonInterval, logisticRegression, funnelLimits) on the rows THIS
 * test defines. The world: two clinicians, 37 cases completed 16 months ago; each judged case has
 * either a healed review at 12 months (PAI 1, no lesion) or an extraction at 300 days.
 * The PDF's text is read with pdftotext (poppler-utils, installed by scripts/test.sh): without it
 * the test fails.
 */
const services = await openServices();
afterAll(() => services.close());
const today = todayIn('Europe/London');

type Who = 'cal' | 'cleo';
type Kind = 'primary_treatment' | 'nonsurgical_retreatment';
/** [clinician, kind, cases, healed]; the rest of each group extracted. */
const GROUPS: [Who, Kind, number, number][] = [
  ['cal', 'primary_treatment', 12, 10],
  ['cal', 'nonsurgical_retreatment', 6, 3],
  ['cleo', 'primary_treatment', 8, 5],
  ['cleo', 'nonsurgical_retreatment', 10, 4],
];
const rows: { who: Who; kind: Kind; y: boolean }[] = GROUPS.flatMap(([who, kind, n, healed]) => Array.from({ length: n }, (_, i) => ({ who, kind, y: i < healed })));

let world: Awaited<ReturnType<typeof makeRegistryPractice>>;
beforeAll(async () => {
  await resetData(services.orm, services.redis);
  world = await makeRegistryPractice(services.em(), 'funnel');
  const done = addMonthsClamped(today, -16);
  let n = 0;
  const add = async (who: Who, kind: Kind, review: 'healed' | 'extracted' | null) => {
    const operator = who === 'cal' ? world.clinician : world.clinician2;
    const patient = await createPatient(services.em(), world.clinician, patientInput({ registryNumber: `F-${++n}`, email: `f${n}@patients.test.invalid` }));
    const c = await createCase(
      services.em(),
      world.clinician,
      caseInput(patient.id, operator.userId, {
        ...completedOn(done, kind),
        paiScore: 4,
        lesionDiameterMm: 3.5,
      }),
    );
    if (review === 'healed') await createReview(services.em(), operator, c.id, { reviewDate: addDaysTo(done, 365), toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });
    if (review === 'extracted') await createReview(services.em(), operator, c.id, { reviewDate: addDaysTo(done, 300), toothStatus: 'extracted', extractionReason: 'fracture' });
  };
  for (const r of rows) await add(r.who, r.kind, r.y ? 'healed' : 'extracted');
  await add('cleo', 'primary_treatment', null); // a case without a review: counted, not judged
}, 120_000);

const X = (k: Kind) => [k === 'nonsurgical_retreatment' ? 1 : 0];

describe('the clinician funnel (issue 12, item 5)', () => {
  it('the lead: practice rate, crude rates, the case-mix model, E, O/E, adjusted rates and limits equal lib/stats on the fixture rows', async () => {
    const r = await outcomesFunnel(services.em(), world.auditor, {});
    const x = rows.filter((q) => q.y).length;
    expect([r.practice.x, r.practice.n, r.cases]).toEqual([x, rows.length, rows.length + 1]);
    expect(r.practice.lower).toBeCloseTo(wilsonInterval(x, rows.length).lower, 12);
    const p0 = x / rows.length;
    // the model: only the kind varies (tooth, lesion and PAI are the same in every case)
    const fit = logisticRegression(rows.map((q) => ({ y: q.y, x: X(q.kind) })));
    expect(r.model?.terms).toEqual(['kind']);
    expect(r.model?.coef[0]).toBeCloseTo(fit.coef[0]!, 10);
    expect(r.model?.coef[1]).toBeCloseTo(fit.coef[1]!, 10);
    const predict = (k: Kind) => 1 / (1 + Math.exp(-(fit.coef[0]! + fit.coef[1]! * X(k)[0]!)));
    expect(r.adjustShown).toBe('adjusted');
    for (const who of ['cal', 'cleo'] as const) {
      const mine = rows.filter((q) => q.who === who);
      const actor = who === 'cal' ? world.clinician : world.clinician2;
      const p = r.points.find((q) => q.key === actor.userId)!;
      expect(p.label).toBe(who);
      const o = mine.filter((q) => q.y).length;
      const e = mine.reduce((s, q) => s + predict(q.kind), 0);
      expect([p.n, p.observed, p.cases]).toEqual([mine.length, o, mine.length + (who === 'cleo' ? 1 : 0)]);
      expect(p.crude.estimate).toBeCloseTo(wilsonInterval(o, mine.length).estimate, 12);
      expect(p.crude.upper).toBeCloseTo(wilsonInterval(o, mine.length).upper, 12);
      expect(p.expected).toBeCloseTo(e, 8);
      expect(p.oe).toBeCloseTo(o / e, 8);
      expect(p.adjusted).toBeCloseTo((o / e) * p0, 8);
      const l95 = funnelLimits(p0, mine.length, 0.95);
      const l998 = funnelLimits(p0, mine.length, 0.998);
      const band = (v: number) => (v > l998.upper ? 'above-99.8' : v > l95.upper ? 'above-95' : v < l998.lower ? 'below-99.8' : v < l95.lower ? 'below-95' : 'within');
      expect(p.crudeBand).toBe(band(o / mine.length));
      expect(p.adjustedBand).toBe(band((o / e) * p0));
    }
    // by hand (the saturated model: each kind's fitted probability is its observed rate): primary 15/20, retreatment 7/16
    const cal = r.points.find((q) => q.key === world.clinician.userId)!;
    expect(cal.expected).toBeCloseTo(12 * (15 / 20) + 6 * (7 / 16), 8);
    for (const l of r.curve) {
      expect(l.lower95).toBe(funnelLimits(p0, l.n, 0.95).lower);
      expect(l.upper998).toBe(funnelLimits(p0, l.n, 0.998).upper);
    }
    expect(r.literature.map((l) => l.rate)).toEqual([0.747, 0.767]);
  });

  it('filters change the rows: the kind narrows the funnel (then no model: nothing varies); the clinician filter only highlights', async () => {
    const primary = await outcomesFunnel(services.em(), world.auditor, { kind: 'primary_treatment', adjust: 'adjusted' });
    const prim = rows.filter((q) => q.kind === 'primary_treatment');
    expect([primary.practice.x, primary.practice.n]).toEqual([prim.filter((q) => q.y).length, prim.length]);
    expect(primary.model).toBeNull();
    expect(primary.adjustShown).toBe('crude');
    expect(primary.modelNote).toMatch(/no case-mix factor varies/);
    expect(primary.literature.map((l) => l.kind)).toEqual(['primary_treatment']);
    const chosen = await outcomesFunnel(services.em(), world.auditor, { clinician: world.clinician2.userId });
    expect(Object.fromEntries(chosen.points.map((p) => [p.label, p.highlighted]))).toEqual({ cal: false, cleo: true });
    await expect(outcomesFunnel(services.em(), world.auditor, { measure: 'soon' })).rejects.toMatchObject({ status: 422 });
    await expect(outcomesFunnel(services.em(), world.auditor, { adjust: 'maybe' })).rejects.toMatchObject({ status: 422 });
  });

  it('a clinician sees their own point named and highlighted; no other clinician’s name, e-mail or id reaches them', async () => {
    const r = await outcomesFunnel(services.em(), world.clinician, { clinician: world.clinician2.userId });
    const json = JSON.stringify(r);
    for (const leak of [world.clinician2.userId, world.clinician2.email, 'cleo']) expect(json).not.toContain(leak);
    const sorted = [...r.points].sort((a, b) => a.key.localeCompare(b.key));
    expect(sorted.map((p) => [p.key, p.label, p.own, p.highlighted])).toEqual([
      ['other-1', 'Another clinician', false, false],
      ['you', 'You (cal)', true, true],
    ]);
    // the figures of the unnamed point are still the engine's
    const theirs = rows.filter((q) => q.who === 'cleo');
    expect([sorted[0]!.n, sorted[0]!.observed]).toEqual([theirs.length, theirs.filter((q) => q.y).length]);
    const csv = await outcomesFunnelCsv(services.em(), world.clinician, {});
    expect(csv).not.toContain('cleo');
    expect(csv.split('\r\n')[1]).toMatch(/^You \(cal\),18,18,13,/);
    expect(csv).toMatch(/\r\nPractice,37,36,22,/);
  });

  it('the CSV names every clinician for the lead, through the one CSV writer; views and downloads are audited', async () => {
    const csv = await outcomesFunnelCsv(services.em(), world.auditor, { measure: 'latest', adjust: 'crude' });
    expect(csv.split('\r\n')[0]).toMatch(/^Clinician,Cases,Judged cases \(n\),Observed successes \(O\),Crude %/);
    expect(csv).toMatch(/\r\ncal,18,18,13,72\.22,/);
    expect(csv).toMatch(/\r\ncleo,19,18,9,50,/);
    expect(csv).toContain('not a verdict');
    const knex = services.orm.em.getKnex();
    const events = (await knex('audit_event').where({ practice_id: world.practice.id }).select('action', 'detail')) as { action: string; detail: Record<string, unknown> | null }[];
    expect(events.map((e) => e.action)).toEqual(expect.arrayContaining(['outcomes.funnel_read', 'outcomes.exported']));
    expect(events.some((e) => e.action === 'outcomes.exported' && e.detail?.view === 'funnel' && e.detail?.measure === 'latest')).toBe(true);
  });
});

/** The text of a PDF by pdftotext (poppler-utils); throws (the test fails) when the tool is missing. */
function pdfText(pdf: Buffer): string {
  return execFileSync('pdftotext', ['-enc', 'UTF-8', '-', '-'], { input: pdf, maxBuffer: 20 * 1024 * 1024 }).toString('utf8');
}

describe('the printable audit report (issue 12, item 8)', () => {
  it('a PDF naming the practice, the date and its filters, with the overview figures, the factor table, the funnel and the methods; audited', async () => {
    const q = { kind: 'primary_treatment', factor: 'kind', from: addMonthsClamped(today, -24), to: today, measure: 'm12', adjust: 'crude' };
    const d = await outcomesReportData(services.em(), world.auditor, q, new Date('2026-03-05T10:30:00Z'));
    expect(d.generated).toBe('5 Mar 2026, 10:30');
    const { pdf, filename } = await outcomesReportPdf(services.em(), world.auditor, q);
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    const dir = path.resolve(import.meta.dirname, '../../test-results');
    mkdirSync(dir, { recursive: true });
    writeFileSync(path.join(dir, 'outcomes-report-fixture.pdf'), pdf); // kept for a look
    expect(filename).toMatch(/^lamina-outcomes-report-\d{4}-\d{2}-\d{2}\.pdf$/);
    const text = pdfText(pdf);
    const flat = text.replace(/\s+/g, ' ');
    expect(flat).toContain('Outcomes audit report');
    expect(flat).toContain('Practice funnel');
    expect(flat).toMatch(/Kind of treatment: Primary root canal treatment/);
    expect(flat).toContain('Clinician: every clinician');
    expect(flat).toContain('Factor: Treatment kind');
    const day = (iso: string) => new Date(`${iso}T12:00:00Z`).toLocaleDateString('en-GB', { day: 'numeric', month: 'short', year: 'numeric', timeZone: 'UTC' });
    expect(flat).toContain(`Completed: ${day(q.from)} to ${day(q.to)}`);
    expect(flat).toContain(`Prepared ${day(today)}`);
    // overview figures: 21 primary cases, 20 reviewed; strict success at 12 months 15 of 20 (75%)
    expect(flat).toMatch(/Cases followed 21 20 with a review/);
    expect(flat).toMatch(/Strict success \(healed\), 12 months 75% \(\d+%-\d+%; 15 of 20\)/);
    expect(flat).toContain('Success by treatment kind');
    expect(flat).toMatch(/3\. Clinician audit: strict success at 12 months, crude/);
    expect(flat).toMatch(/cal \(12 cases\)/);
    expect(flat).toContain('4. Methods');
    expect(flat).toContain('not a verdict');
    expect(flat).toContain('Ng et al. 2007');
    expect(flat).toMatch(/Page 1 of \d/);
    expect(pageCount(pdf)).toBeGreaterThanOrEqual(2);
    const knex = services.orm.em.getKnex();
    const event = (await knex('audit_event').where({ practice_id: world.practice.id, action: 'outcomes.report_downloaded' }).first('detail')) as { detail: Record<string, unknown> };
    expect(event.detail).toMatchObject({ kind: 'primary_treatment', factor: 'kind', measure: 'm12', adjust: 'crude' });
  }, 60_000);

  it('a clinician’s report has their own cases beside the practice, and no other clinician’s name', async () => {
    const { pdf } = await outcomesReportPdf(services.em(), world.clinician, { factor: 'clinician' });
    const flat = pdfText(pdf).replace(/\s+/g, ' ');
    expect(flat).toContain('Clinician: your own cases (cal)');
    expect(flat).toContain('The practice overall');
    expect(flat).toContain('You (cal)');
    expect(flat).not.toContain('cleo');
    expect(flat).not.toContain(world.clinician2.userId);
  }, 60_000);

  it('the factor table names open levels as the factor view does: clinicians and referrers by name, never an id', async () => {
    const uuid = /[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}/;
    const byClinician = pdfText((await outcomesReportPdf(services.em(), world.auditor, { factor: 'clinician' })).pdf).replace(/\s+/g, ' ');
    expect(byClinician).toMatch(/Success by clinician.*\bcal\b.*\bcleo\b/);
    expect(byClinician).not.toMatch(uuid);
    const byReferrer = pdfText((await outcomesReportPdf(services.em(), world.auditor, { factor: 'referrer' })).pdf).replace(/\s+/g, ' ');
    expect(byReferrer).toContain('No referrer recorded');
    expect(byReferrer).not.toMatch(uuid);
  }, 60_000);

  it('a repeat with unchanged data is the kept PDF (same bytes), audited per download; another reader or a change of the data draws again', async () => {
    invalidateOutcomeCases();
    const knex = services.orm.em.getKnex();
    const downloads = async () =>
      ((await knex('audit_event').where({ practice_id: world.practice.id, action: 'outcomes.report_downloaded' }).orderBy('at').select('detail')) as { detail: Record<string, unknown> }[]).map((e) => e.detail);
    const before = (await downloads()).length;
    const first = await outcomesReportPdf(services.em(), world.auditor, { factor: 'kind', measure: 'm12', adjust: 'crude', clinician: '' });
    // the same filters normalised (defaults, a blank clinician): served from the cache
    const again = await outcomesReportPdf(services.em(), world.auditor, { adjust: 'crude' });
    expect(again.pdf.equals(first.pdf)).toBe(true);
    // a clinician asking the same is forced to their own cases and named: their own PDF
    const theirs = await outcomesReportPdf(services.em(), world.clinician, { factor: 'kind', adjust: 'crude' });
    expect(theirs.pdf.equals(first.pdf)).toBe(false);
    expect(pdfText(theirs.pdf)).toContain('your own cases (cal)');
    // one statement changing a case moves the data version on: drawn again
    await knex.raw('update treatment_case set lesion_diameter_mm = lesion_diameter_mm where id = (select id from treatment_case where practice_id = ? order by id limit 1)', [world.practice.id]);
    const afterWrite = await outcomesReportPdf(services.em(), world.auditor, { factor: 'kind', adjust: 'crude' });
    const events = (await downloads()).slice(before);
    expect(events.map((e) => e.cached)).toEqual([false, true, false, false]);
    expect(events.map((e) => e.pages)).toEqual([first, again, theirs, afterWrite].map((r) => pageCount(r.pdf)));
    expect(events.every((e) => e.factor === 'kind' && e.adjust === 'crude')).toBe(true);
    expect(pdfText(afterWrite.pdf).replace(/\s+/g, ' ')).toContain('Cases followed');
  }, 120_000);

  it('bad filters are a 422 before anything is drawn', async () => {
    await expect(outcomesReportPdf(services.em(), world.auditor, { factor: 'horoscope' })).rejects.toMatchObject({ status: 422 });
    await expect(outcomesReportPdf(services.em(), world.auditor, { from: '2026-02-30' })).rejects.toMatchObject({ status: 422 });
  });
});
