import 'server-only';
import { env } from '@/lib/env';
import type { EntityManager, Knex } from '@mikro-orm/postgresql';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { can } from '@/lib/auth/permissions';
import { writeCsv } from '@/lib/csv/write';
import { applyFilter, byFactor, curves, type CurveMethod, type Curves, type Endpoint, FACTORS, NO_REFERRER, overview, type FactorKey, type FactorTable, type OutcomeCase, type OutcomeFilter, type Overview, type Rate } from '@/lib/outcomes';
import type { RecordedReview } from '@/lib/scoring';
import { levelParams, OutcomeCurvesQuery, OutcomeFactorQuery, OutcomeFilterQuery } from '@/lib/schemas/outcomes';
import { audit, auditRead } from './audit';
import { cachedOutcomeCases, memoView, type DataAsOf, type OutcomeReader } from './outcomes-cache';
import { parseInput } from './parse';
import { readKnex } from '@/lib/db-read';
import { knexOf, practiceSettings, todayIn } from './registry-common';

/**
 * The practice lead's outcomes area (issue 12): one lean SQL read of the practice's completed
 * cases with their reviews (no entities), then lib/outcomes computes. The lead (auditor) sees
 * every clinician; a clinician sees their own cases, plus the practice's overall figures.
 */

export interface CaseRow {
  id: string;
  patient_id: string;
  operator_id: string;
  kind: string;
  completion_date: string;
  pai_score: number;
  lesion_diameter_mm: string | number;
  fill_length_class: OutcomeCase['fillLengthClass'];
  tooth_group: string;
  tooth_arch: 'upper' | 'lower';
  previous_case_id: string | null;
  fill_density: string | null;
  sealer_class: string | null;
  filling_technique: string | null;
  complications: string[] | null;
  coronal_restoration: string | null;
  definitive_restoration: string | null;
  referrer_id: string | null;
  open_visit: boolean;
  reviews: ReviewJson[];
}

/** A review as CURRENT_REVIEWS_JSON writes it (`l`, the lesion, only when asked for). */
export interface ReviewJson {
  d: string;
  s: RecordedReview['toothStatus'];
  p: number | null;
  l?: string | number | null;
  g: RecordedReview['signs'];
  e: string | null;
}

/**
 * SQL: the current reviews (not those a correction superseded) of the case aliased `c`, in date
 * order, as a JSON array of ReviewJson; `withLesion` adds each review's lesion diameter.
 */
export const currentReviewsJson = (withLesion = false) =>
  `coalesce((select json_agg(json_build_object('d', r.review_date::text, 's', r.tooth_status, 'p', r.pai_score,${withLesion ? " 'l', r.lesion_diameter_mm," : ''} 'g', r.signs, 'e', r.event_date::text) order by r.review_date, r.created_at) from review r where r.case_id = c.id and r.superseded_by_id is null), '[]'::json)`;

/** The reviews of CURRENT_REVIEWS_JSON as lib/scoring reads them. */
export const recordedReviews = (json: readonly ReviewJson[]): RecordedReview[] =>
  json.map((x) => ({ reviewDate: x.d, toothStatus: x.s, paiScore: x.p, signs: x.g ?? {}, eventDate: x.e }));

/** Every completed case of the practice (archived cases and patients left out), with its current reviews (not those a correction superseded) in date order. */
export async function readOutcomeCases(em: EntityManager, practiceId: string): Promise<OutcomeCase[]> {
  // JIT off for this read: its cost estimate (100,000 sub-plans) makes PostgreSQL compile it, which
  // costs more than it saves (about a quarter of the read at 100,000 cases; npm run bench -- outcomes).
  // On the read replica when DATABASE_READ_URL is set (lib/db-read.ts): figures may lag by a moment.
  const rows = await readKnex(em).transaction(async (knex) => {
    await knex.raw('set local jit = off');
    return readRows(knex, practiceId);
  });
  return rows.map(outcomeCaseOf);
}

/**
 * The rows of readOutcomeCases among some cases and the cases of some patients (the same query
 * and rules, limited): what the cache re-reads after a change (lib/services/outcomes-cache.ts).
 */
export async function readSomeOutcomeCases(em: EntityManager, practiceId: string, caseIds: readonly string[], patientIds: readonly string[]): Promise<OutcomeCase[]> {
  if (!caseIds.length && !patientIds.length) return [];
  const rows = await readRows(readKnex(em), practiceId, { caseIds, patientIds });
  return rows.map(outcomeCaseOf);
}

/** How the cache reads the rows. */
export const OUTCOME_READER: OutcomeReader = { all: readOutcomeCases, some: readSomeOutcomeCases };

/** A row of outcomeCaseColumns as lib/outcomes reads it (the cohort export's reader uses it too). */
export function outcomeCaseOf(r: CaseRow): OutcomeCase {
  return {
    id: r.id,
    patientId: r.patient_id,
    operatorId: r.operator_id,
    kind: r.kind,
    completionDate: r.completion_date,
    baselinePai: Number(r.pai_score),
    lesionDiameterMm: Number(r.lesion_diameter_mm),
    fillLengthClass: r.fill_length_class,
    toothGroup: r.tooth_group,
    toothArch: r.tooth_arch,
    previousCaseId: r.previous_case_id,
    fillDensity: r.fill_density,
    sealerClass: r.sealer_class,
    fillingTechnique: r.filling_technique,
    complications: r.complications ?? [],
    coronalRestoration: r.coronal_restoration,
    definitiveRestoration: r.definitive_restoration,
    referrerId: r.referrer_id,
    openVisit: r.open_visit,
    reviews: recordedReviews(r.reviews),
  };
}

/** The columns of a completed case (alias `c`) that outcomeCaseOf reads: one home for the outcome engine's row. */
export function outcomeCaseColumns(knex: Knex) {
  return [
      'c.id',
      'c.patient_id',
      'c.operator_id',
      'c.kind',
      knex.raw('c.completion_date::text as completion_date'),
      'c.pai_score',
      'c.lesion_diameter_mm',
      'c.fill_length_class',
      'c.tooth_group',
      'c.tooth_arch',
      'c.previous_case_id',
      'c.fill_density',
      'c.sealer_class',
      'c.filling_technique',
      'c.complications',
      'c.coronal_restoration',
      'c.definitive_restoration',
      'c.referrer_id',
      knex.raw(`exists (select 1 from recall_visit v where v.case_id = c.id and v.status in ('planned', 'invited', 'confirmed', 'missed')) as open_visit`),
      knex.raw(`${currentReviewsJson()} as reviews`),
  ];
}

async function readRows(knex: Knex, practiceId: string, only?: { caseIds: readonly string[]; patientIds: readonly string[] }): Promise<CaseRow[]> {
  const q = knex
    .select(...outcomeCaseColumns(knex))
    .from('treatment_case as c')
    .join('patient as p', 'p.id', 'c.patient_id')
    .where('c.practice_id', practiceId)
    .whereNull('c.archived_at')
    .whereNull('p.archived_at')
    .whereNotNull('c.completion_date')
    .orderBy([{ column: 'c.completion_date' }, { column: 'c.id' }]);
  if (only) q.where((b) => b.whereIn('c.id', [...only.caseIds]).orWhereIn('c.patient_id', [...only.patientIds]));
  return (await q) as CaseRow[];
}

/** Whether the actor sees every clinician's cases (the lead) or only their own (a clinician). */
export function seesWholePractice(actor: Actor): boolean {
  return actor.roles.includes('auditor');
}

/** What every outcomes view starts from: the actor's filter, the practice's rows, today and the minimum observation time. Views in their own files (outcomes-*.ts) build on it. */
export interface Scope {
  filter: OutcomeFilter;
  /** The filter the actor asked for, limited to their own cases when they are a clinician. */
  own: boolean;
  today: string;
  /** the practice's time zone (its settings, read once for the request) */
  timeZone: string;
  minObs: number;
  all: OutcomeCase[];
  clinicians: { id: string; name: string }[];
  /** The practice's referrers, named for a reader who may read patient records (`patient.read`), else empty. */
  referrers: { id: string; name: string }[];
  /** the practice's data version the rows are from (lib/services/outcomes-cache.ts) */
  version: string;
  /** when the rows were read, and whether entries were saved since (bounded lag, OUTCOMES_MAX_LAG_MS) */
  asOf: DataAsOf;
  /**
   * A view's figures, kept for this data version, today and minimum observation time under `key`
   * (the result must not be changed). `compute` gets the rows (`all`) and must use nothing else
   * that is not in the key: the warmer runs it again on a newer version's rows (outcomes-cache.ts).
   */
  memo: <T>(key: readonly unknown[], compute: (all: OutcomeCase[]) => T) => T;
}

export async function scope(em: EntityManager, actor: Actor, q: OutcomeFilterQuery): Promise<Scope> {
  assertCan(actor, 'outcomes.read');
  const whole = seesWholePractice(actor);
  // the rows come from the per-practice cache while the practice's data version is unchanged
  // The practice's clinicians are read beside the rows; past clinicians who treated some of the
  // rows' cases (rare) take a second read once the rows are known.
  const [settings, { rows: all, version, asOf }, referrers, current] = await Promise.all([
    practiceSettings(em, actor.practiceId),
    cachedOutcomeCases(em, actor.practiceId, OUTCOME_READER, env.OUTCOMES_MAX_LAG_MS),
    practiceReferrers(em, actor),
    whole ? practiceClinicians(em, actor, []) : null,
  ]);
  const filter: OutcomeFilter = { from: q.from, to: q.to, kind: q.kind, clinician: whole ? q.clinician : actor.userId, levels: q.levels };
  const today = todayIn(settings.timeZone);
  const minObs = settings.minObservationDays;
  const memo = <T>(key: readonly unknown[], compute: (all: OutcomeCase[]) => T): T => memoView(actor.practiceId, version, [...key, today, minObs], all, compute);
  // who treated the practice's cases, from the rows (kept per data version) rather than a scan of the cases
  const operators = memoView(actor.practiceId, version, ['operators'], all, (rows) => [...new Set(rows.map((c) => c.operatorId))]);
  const clinicians = !current
    ? [{ id: actor.userId, name: actor.name ?? actor.email }]
    : operators.every((id) => current.some((c) => c.id === id))
      ? current
      : await practiceClinicians(em, actor, operators);
  return { filter, own: !whole, today, timeZone: settings.timeZone, minObs, all, clinicians, referrers, version, asOf, memo };
}

/**
 * Referrers are named to whoever may read patient records (`patient.read`: the lead and the
 * clinicians, who see the referrer on every case), as on the case pages; anyone else would see
 * "Referrer 1, 2…" — no such reader has `outcomes.read` today.
 */
async function practiceReferrers(em: EntityManager, actor: Actor): Promise<{ id: string; name: string }[]> {
  if (!can(actor.roles, 'patient.read')) return [];
  const rows = (await knexOf(em).select('id', 'name').from('referrer').where({ practice_id: actor.practiceId }).orderBy('name')) as { id: string; name: string }[];
  return rows;
}

/** The names an open factor's levels carry, for the key of kept figures (a renamed clinician or referrer changes no data version). */
const namesOf = (s: Pick<Scope, 'clinicians' | 'referrers'>, factor: FactorKey | null) => (factor === 'clinician' ? s.clinicians : factor === 'referrer' ? s.referrers : null);

/** The words of an open factor's levels: clinicians and referrers by name (closed vocabularies name themselves). */
export function levelNamer(s: Pick<Scope, 'clinicians' | 'referrers'>, factor: FactorKey | null): ((code: string) => string) | undefined {
  if (factor === 'clinician') {
    const names = new Map(s.clinicians.map((c) => [c.id, c.name]));
    return (id) => names.get(id) ?? 'Former clinician';
  }
  if (factor === 'referrer') {
    const names = new Map(s.referrers.map((r) => [r.id, r.name]));
    return (id) => (id === NO_REFERRER ? 'No referrer recorded' : (names.get(id) ?? 'Referrer'));
  }
  return undefined;
}

async function practiceClinicians(em: EntityManager, actor: Actor, operators: readonly string[]): Promise<{ id: string; name: string }[]> {
  const knex = knexOf(em);
  // Clinicians of the practice, and anyone else who treated one of its cases (a past clinician).
  const rows = (await knex
    .distinct('u.id', 'u.name', 'u.email')
    .from('app_user as u')
    .where((b) =>
      b.whereIn('u.id', knex('membership').select('user_id').where({ practice_id: actor.practiceId, role: 'clinician' })).orWhereIn('u.id', [...operators]),
    )
    .orderBy('u.name')) as { id: string; name: string | null; email: string }[];
  return rows.map((r) => ({ id: r.id, name: r.name ?? r.email }));
}

export interface OverviewReport {
  filter: OutcomeFilter;
  own: boolean;
  /** when the figures' rows were read, and whether entries were saved since (lib/services/outcomes-cache.ts) */
  asOf: DataAsOf;
  clinicians: { id: string; name: string }[];
  referrers: { id: string; name: string }[];
  overview: Overview;
  /** For a clinician: the practice's overall figures (same period and kind, every clinician). */
  practice: Overview | null;
}

/** The overview of a scope's filter and, for a clinician, of the practice overall (same filter, every clinician); kept per data version (no audit: callers audit). */
export function overviewOfScope(s: Scope): { overview: Overview; practice: Overview | null } {
  const of = (f: OutcomeFilter) => s.memo(['overview', f], (all) => overview(applyFilter(all, f), all, s.today, s.minObs));
  return { overview: of(s.filter), practice: s.own ? of({ ...s.filter, clinician: undefined }) : null };
}

// Each view is read by an unaudited step shared by the screen (audited as a read) and its CSV
// (audited once, as the download).
export async function overviewReport(em: EntityManager, actor: Actor, raw: unknown): Promise<OverviewReport> {
  const q = parseInput(OutcomeFilterQuery, raw ?? {});
  const s = await scope(em, actor, q);
  const { overview: result, practice } = overviewOfScope(s);
  return { filter: s.filter, own: s.own, asOf: s.asOf, clinicians: s.clinicians, referrers: s.referrers, overview: result, practice };
}

export async function outcomesOverview(em: EntityManager, actor: Actor, raw: unknown): Promise<OverviewReport> {
  const r = await overviewReport(em, actor, raw);
  await auditRead(em, actor, { action: 'outcomes.overview_read', detail: { ...filterDetail(r.filter), cases: r.overview.cases } });
  return r;
}

export interface FactorReport {
  filter: OutcomeFilter;
  own: boolean;
  /** when the figures' rows were read, and whether entries were saved since (lib/services/outcomes-cache.ts) */
  asOf: DataAsOf;
  clinicians: { id: string; name: string }[];
  referrers: { id: string; name: string }[];
  factor: FactorKey;
  table: FactorTable;
  /** Survival per level of the factor (same cases; the endpoint and method asked, healing and Turnbull by default). */
  curves: Curves;
}

export async function factorReport(em: EntityManager, actor: Actor, raw: unknown): Promise<FactorReport> {
  const q = parseInput(OutcomeFactorQuery, raw ?? {});
  const s = await scope(em, actor, q);
  const factor = q.factor as FactorKey;
  const table = factorTableOfScope(s, factor);
  // the same figures (and kept figures) as the curves view split by this factor
  const perLevel = curvesOfScope(s, { endpoint: q.endpoint, method: q.method, factor, stratum: null });
  return { filter: s.filter, own: s.own, asOf: s.asOf, clinicians: s.clinicians, referrers: s.referrers, factor, table, curves: perLevel };
}

export async function outcomesByFactor(em: EntityManager, actor: Actor, raw: unknown): Promise<FactorReport> {
  const r = await factorReport(em, actor, raw);
  await auditRead(em, actor, { action: 'outcomes.factor_read', detail: { ...filterDetail(r.filter), factor: r.factor } });
  return r;
}

/**
 * A factor's table for a scope's filter, its open levels (clinicians, referrers) named: kept per data
 * version and filter, with the names in the key. The factor view and the printed report both use it.
 */
export function factorTableOfScope(s: Scope, factor: FactorKey): FactorTable {
  return s.memo(['factor', s.filter, factor, namesOf(s, factor)], (all) => byFactor(applyFilter(all, s.filter), factor, s.minObs, levelNamer(s, factor)));
}

/** The survival curves of a scope's filter, per level of `factor` (its open levels named), kept per data version (no audit: callers audit). */
function curvesOfScope(s: Scope, o: { endpoint: Endpoint; method: CurveMethod; factor: FactorKey | null; stratum: FactorKey | null }): Curves {
  return s.memo(['curves', s.filter, o.endpoint, o.method, o.factor, o.stratum, namesOf(s, o.factor)], (all) =>
    curves(applyFilter(all, s.filter), all, { ...o, minObs: s.minObs, levelName: levelNamer(s, o.factor) }),
  );
}

export interface CurvesReport {
  filter: OutcomeFilter;
  own: boolean;
  /** when the figures' rows were read, and whether entries were saved since (lib/services/outcomes-cache.ts) */
  asOf: DataAsOf;
  clinicians: { id: string; name: string }[];
  referrers: { id: string; name: string }[];
  curves: Curves;
}

export async function curvesReport(em: EntityManager, actor: Actor, raw: unknown): Promise<CurvesReport & { detail: Record<string, string> }> {
  const q = parseInput(OutcomeCurvesQuery, raw ?? {});
  const s = await scope(em, actor, q);
  const factor = (q.factor ?? null) as FactorKey | null;
  const stratum = (q.stratum ?? null) as FactorKey | null;
  const result = curvesOfScope(s, { endpoint: q.endpoint, method: q.method, factor, stratum });
  const detail = { ...filterDetail(s.filter), endpoint: q.endpoint, method: result.method, ...(factor ? { factor } : {}), ...(result.stratum ? { stratum: result.stratum } : {}) };
  return { filter: s.filter, own: s.own, asOf: s.asOf, clinicians: s.clinicians, referrers: s.referrers, curves: result, detail };
}

export async function outcomesCurves(em: EntityManager, actor: Actor, raw: unknown): Promise<CurvesReport> {
  const { detail, ...r } = await curvesReport(em, actor, raw);
  await auditRead(em, actor, { action: 'outcomes.curves_read', detail });
  return r;
}

/** A filter for the audit trail: its set fields, level filters as in the URL (`f.group: 'molar'`). */
export function filterDetail(f: OutcomeFilter): Record<string, string> {
  const { levels, ...rest } = f;
  return { ...(Object.fromEntries(Object.entries(rest).filter(([, v]) => v !== undefined)) as Record<string, string>), ...levelParams(levels) };
}

const pct = (x: number | null) => (x === null ? null : Math.round(x * 10000) / 100);
const rateCells = (r: Rate) => [r.x, r.n, pct(r.estimate), pct(r.lower), pct(r.upper), r.few ? 'few cases' : ''];
const RATE_HEAD = (what: string) => [`${what}: successes`, `${what}: n`, `${what} %`, `${what}: 95% lower %`, `${what}: 95% upper %`, `${what}: note`];

/** A view's table as CSV through the one CSV writer (lib/csv/write.ts); the download is audited once, with its filter. */
export async function outcomesCsv(em: EntityManager, actor: Actor, view: 'overview' | 'factor' | 'curves', raw: unknown): Promise<string> {
  if (view === 'overview') {
    const { overview: o, filter } = await overviewReport(em, actor, raw);
    const header = ['Figure', 'At', 'Value %', '95% lower %', '95% upper %', 'n', 'Detail'];
    const rows: (string | number | null)[][] = [
      ['Cases followed', '', null, null, null, o.cases, `${o.reviewed} with a review`],
      ['Lost to follow-up (due for the 12-month review, no outcome a year or more after treatment)', '', pct(o.lost.estimate), pct(o.lost.lower), pct(o.lost.upper), o.lost.n, `${o.lost.x} cases, ${o.lostStillInvited} still invited`],
      ...o.completeness.map((c) => ['Follow-up completeness', `${c.months} months`, pct(c.rate.estimate), pct(c.rate.lower), pct(c.rate.upper), c.rate.n, `${c.rate.x} seen`]),
      ...o.success.flatMap((f) => {
        const at = f.at === 'latest' ? 'latest review ≥ 12 months' : `${f.at} months`;
        return [
          ['Success, strict (healed)', at, pct(f.strict.estimate), pct(f.strict.lower), pct(f.strict.upper), f.strict.n, `best ${pct(f.strictBounds.best) ?? ''}% / worst ${pct(f.strictBounds.worst) ?? ''}%; ${f.missing} lost to follow-up, ${f.uncertain} uncertain`],
          ['Success, lenient (healed or healing)', at, pct(f.lenient.estimate), pct(f.lenient.lower), pct(f.lenient.upper), f.lenient.n, `best ${pct(f.lenientBounds.best) ?? ''}% / worst ${pct(f.lenientBounds.worst) ?? ''}%`],
        ];
      }),
      ...o.survival.map((sv) =>
        o.teeth === 0
          ? ['Tooth survival (Kaplan–Meier)', `${sv.years} years`, null, null, null, 0, 'no teeth']
          : ['Tooth survival (Kaplan–Meier)', `${sv.years} years`, pct(sv.km.survival), pct(sv.km.lower), pct(sv.km.upper), sv.km.nRisk, sv.turnbull === null ? 'Turnbull not computed' : `Turnbull ${pct(sv.turnbull)}%`],
      ),
    ];
    await audit(em, actor, { action: 'outcomes.exported', detail: { view, ...filterDetail(filter) } });
    return writeCsv(header, rows);
  }
  if (view === 'curves') {
    const { curves: c, detail } = await curvesReport(em, actor, raw);
    const header = ['Level', 'Method', 'Day', 'Survival', '95% lower', '95% upper'];
    const rows = c.curves.flatMap((cv) => cv.points.map((p) => [cv.level, c.method === 'km' ? 'Kaplan–Meier' : 'Turnbull', p.time, p.survival, p.lower ?? null, p.upper ?? null]));
    for (const cp of c.competing) rows.push(...cp.points.map((p) => [`Cumulative incidence: ${cp.cause}`, 'Aalen–Johansen', p.time, p.incidence, p.lower, p.upper]));
    for (const cv of c.curves) {
      rows.push([cv.level, 'Median survival, days (Kaplan–Meier)', null, cv.median.median, cv.median.lower, cv.median.upper]);
      if (cv.rmst) rows.push([cv.level, `Restricted mean survival to day ${cv.rmst.tau} (Kaplan–Meier)`, cv.rmst.tau, cv.rmst.mean, cv.rmst.lower, cv.rmst.upper]);
    }
    if (c.logRank) rows.push([c.logRank.method, `chi-square ${c.logRank.chiSquare}, ${c.logRank.df} df`, null, c.logRank.pValue, null, null]);
    await audit(em, actor, { action: 'outcomes.exported', detail: { view, ...detail } });
    return writeCsv(header, rows);
  }
  const r = await factorReport(em, actor, raw);
  const header = [FACTORS[r.factor].label, 'Cases', ...RATE_HEAD('Strict'), ...RATE_HEAD('Lenient'), 'Uncertain'];
  const rows: (string | number | null)[][] = [
    ...r.table.levels.map((l) => [l.level, l.cases, ...rateCells(l.strict), ...rateCells(l.lenient), l.uncertain]),
  ];
  if (r.table.test) rows.push([`${r.table.test.method === 'fisher' ? 'Fisher exact test' : 'Pearson chi-square test'} p`, r.table.test.pValue]);
  await audit(em, actor, { action: 'outcomes.exported', detail: { view, ...filterDetail(r.filter), factor: r.factor } });
  return writeCsv(header, rows);
}


