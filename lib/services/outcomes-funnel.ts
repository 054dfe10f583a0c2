import 'server-only';
import type { DataAsOf } from './outcomes-cache';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Actor } from '@/lib/auth/actor';
import { writeCsv } from '@/lib/csv/write';
import { applyFilter, type OutcomeFilter, type Rate } from '@/lib/outcomes';
import {
  BAND_WORDS,
  FUNNEL_CAUTION,
  FUNNEL_MEASURE_LABELS,
  funnel,
  literatureFor,
  type Funnel,
  type FunnelMeasure,
  type FunnelUnit,
  type Limits,
  type LiteratureLine,
} from '@/lib/outcomes/funnel';
import { OutcomeFunnelQuery } from '@/lib/schemas/outcomes';
import { audit, auditRead } from './audit';
import { filterDetail, scope, type Scope } from './outcomes';
import { parseInput } from './parse';

/**
 * The clinician audit (issue 12, item 5): every clinician of the selection (period and kind) on one
 * funnel, whoever asks; the clinician filter only picks the highlighted point. The lead sees names;
 * a clinician sees their own point named and the others as unnamed points ("Another clinician"),
 * with neither their names nor their ids in the answer, and a table of their own row alone.
 */
/** A clinician's figures (lib/outcomes/funnel `FunnelUnit`) as the actor may see them: the id replaced by a key and a label. */
export type FunnelPoint = Omit<FunnelUnit, 'id'> & {
  /** the lead: the clinician's user id; a clinician: 'you' or 'other-N' (never another's id) */
  key: string;
  label: string;
  /** the actor's own point */
  own: boolean;
  /** the point to highlight (a clinician's own; the lead's chosen clinician) */
  highlighted: boolean;
};

export interface FunnelReport {
  filter: OutcomeFilter;
  own: boolean;
  clinicians: { id: string; name: string }[];
  measure: FunnelMeasure;
  measureLabel: string;
  adjust: 'crude' | 'adjusted';
  /** adjusted asked for but no model could be fitted: the crude figures are shown */
  adjustShown: 'crude' | 'adjusted';
  practice: Rate;
  cases: number;
  model: Funnel['model'];
  modelNote: string | null;
  points: FunnelPoint[];
  curve: Limits[];
  literature: LiteratureLine[];
  caution: string;
}

/** The funnel of a scope, the points named as the actor may see them (no audit: callers audit). */
export function funnelOfScope(s: Scope, measure: FunnelMeasure, adjust: 'crude' | 'adjusted', actorId: string): FunnelReport {
  // every clinician of the period and kind; kept per data version like the other views (lib/services/outcomes-cache.ts)
  const practiceFilter = { ...s.filter, clinician: undefined };
  const f = s.memo(['funnel', practiceFilter, measure], (all) => funnel(applyFilter(all, practiceFilter), measure, s.minObs));
  const names = new Map(s.clinicians.map((c) => [c.id, c.name]));
  let other = 0;
  const points: FunnelPoint[] = f.units.map((u) => {
    const own = u.id === actorId;
    const highlighted = s.own ? own : u.id === s.filter.clinician;
    const { id, ...figures } = u;
    const key = s.own ? (own ? 'you' : `other-${++other}`) : id;
    const label = s.own ? (own ? `You (${names.get(id) ?? 'your cases'})` : 'Another clinician') : (names.get(id) ?? 'Former clinician');
    return { key, label, own, highlighted, ...figures };
  });
  return {
    filter: s.filter,
    own: s.own,
    clinicians: s.clinicians,
    measure,
    measureLabel: FUNNEL_MEASURE_LABELS[measure],
    adjust,
    adjustShown: adjust === 'adjusted' && f.model ? 'adjusted' : 'crude',
    practice: f.practice,
    cases: f.cases,
    model: f.model,
    modelNote: f.modelNote,
    points,
    curve: f.curve,
    literature: literatureFor(s.filter.kind),
    caution: FUNNEL_CAUTION,
  };
}

/** The funnel of the actor's choices and its scope (no audit: callers audit). */
export async function funnelReport(em: EntityManager, actor: Actor, raw: unknown): Promise<{ s: Scope; r: FunnelReport }> {
  const q = parseInput(OutcomeFunnelQuery, raw ?? {});
  const s = await scope(em, actor, q);
  return { s, r: funnelOfScope(s, q.measure, q.adjust, actor.userId) };
}

/** The funnel for the screen: its figures, and when their rows were read (the printed report draws the figures alone). */
export async function outcomesFunnel(em: EntityManager, actor: Actor, raw: unknown): Promise<FunnelReport & { asOf: DataAsOf }> {
  const { s, r } = await funnelReport(em, actor, raw);
  await auditRead(em, actor, { action: 'outcomes.funnel_read', detail: { ...filterDetail(s.filter), measure: r.measure, adjust: r.adjustShown, clinicians: r.points.length } });
  return { ...r, asOf: s.asOf };
}

const pct = (x: number | null) => (x === null ? null : Math.round(x * 10000) / 100);
const round = (x: number | null, digits = 3) => (x === null ? null : Math.round(x * 10 ** digits) / 10 ** digits);

/** The rows a table of the funnel shows: every clinician for the lead; a clinician's own row alone for a clinician. */
export function tableRows(r: FunnelReport): FunnelPoint[] {
  return r.own ? r.points.filter((p) => p.own) : r.points;
}

/** The funnel's table as CSV (the one CSV writer), audited as a download. */
export async function outcomesFunnelCsv(em: EntityManager, actor: Actor, raw: unknown): Promise<string> {
  const { s, r } = await funnelReport(em, actor, raw);
  const header = [
    'Clinician',
    'Cases',
    'Judged cases (n)',
    'Observed successes (O)',
    'Crude %',
    'Crude: 95% lower %',
    'Crude: 95% upper %',
    'Crude against the limits',
    'Expected successes (E)',
    'O/E',
    'Risk-adjusted %',
    'Risk-adjusted against the limits',
  ];
  const rows: (string | number | null)[][] = tableRows(r).map((p) => [
    p.label,
    p.cases,
    p.n,
    p.observed,
    pct(p.crude.estimate),
    pct(p.crude.lower),
    pct(p.crude.upper),
    p.crudeBand ? BAND_WORDS[p.crudeBand] : '',
    round(p.expected),
    round(p.oe),
    pct(p.adjusted),
    p.adjustedBand ? BAND_WORDS[p.adjustedBand] : '',
  ]);
  rows.push(['Practice', r.cases, r.practice.n, r.practice.x, pct(r.practice.estimate), pct(r.practice.lower), pct(r.practice.upper), '', null, null, null, '']);
  rows.push([`Measure: ${r.measureLabel}`]);
  rows.push([r.model ? `Case-mix model: ${r.model.names.slice(1).join('; ')} (logistic, ${r.model.n} judged cases)` : (r.modelNote ?? '')]);
  rows.push([r.caution]);
  await audit(em, actor, { action: 'outcomes.exported', detail: { view: 'funnel', ...filterDetail(s.filter), measure: r.measure } });
  return writeCsv(header, rows);
}
