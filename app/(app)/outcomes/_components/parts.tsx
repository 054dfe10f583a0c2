import Link from 'next/link';
import type { ReactNode } from 'react';
import { CASE_KINDS, CASE_KIND_LABELS, type CaseKind } from '@/lib/registry/case-kinds';
import { FACTOR_KEYS, FACTORS, levelLabel, NO_REFERRER, type FactorKey, type OutcomeFilter, type Rate } from '@/lib/outcomes';
import { Caution } from '@/components/ui/Caution';
import { Notice } from '@/components/ui/Notice';
import { fmtDate } from '@/components/ui/format';
import { ReportButton } from './ReportButton';
import type { DataAsOf } from '@/lib/services/outcomes-cache';

export const FILTER_KEYS = ['from', 'to', 'clinician', 'kind'] as const;
/** Level filters in the URL: `f.<factor>=<code>[,<code>…]` (lib/schemas/outcomes.ts validates them). */
const LEVEL_PREFIX = 'f.';
const isLevelKey = (k: string) => k.startsWith(LEVEL_PREFIX);

/** The filters of the URL (strings as typed; the service validates them), level filters included. */
export function filtersOf(params: Record<string, string | string[] | undefined>): Record<string, string> {
  const out: Record<string, string> = {};
  for (const k of [...FILTER_KEYS, 'factor', 'endpoint', 'method', 'measure', 'adjust', 'stratum', ...Object.keys(params).filter(isLevelKey)]) {
    const v = params[k];
    if (typeof v === 'string' && v !== '') out[k] = v;
  }
  return out;
}

/** The filters every view shares (period, clinician, kind, level filters): what tab links, forms and CSV links carry. */
export function sharedFilters(filters: Record<string, string>): Record<string, string> {
  return Object.fromEntries(Object.entries(filters).filter(([k]) => (FILTER_KEYS as readonly string[]).includes(k) || isLevelKey(k)));
}

/** Hidden inputs carrying the shared filters in a view's own form. */
export function HiddenFilters({ filters }: { filters: Record<string, string> }) {
  return Object.entries(sharedFilters(filters)).map(([k, v]) => <input key={k} type="hidden" name={k} value={v} />);
}

/** The URL keeping the filters and adding (or narrowing to) one level of a factor. */
export function withLevel(path: string, filters: Record<string, string>, factor: FactorKey, code: string): string {
  if (factor === 'clinician') return `${path}${queryOf({ ...filters, clinician: code })}`;
  return `${path}${queryOf({ ...filters, [`${LEVEL_PREFIX}${factor}`]: code })}`;
}

interface Chip {
  key: string;
  text: string;
  /** the URL without this filter (or without this one level) */
  href: string;
}

/** One removable chip per filter in the URL; a level filter with several levels has one chip per level. */
export function filterChips(
  current: string,
  filters: Record<string, string>,
  names: { clinicians: { id: string; name: string }[]; referrers?: { id: string; name: string }[]; own: boolean },
): Chip[] {
  const without = (key: string, value?: string) => {
    const next = { ...filters };
    if (value === undefined) delete next[key];
    else {
      const rest = (next[key] ?? '').split(',').filter((c) => c.trim() !== value);
      if (rest.length) next[key] = rest.join(',');
      else delete next[key];
    }
    return `${current}${queryOf(next)}`;
  };
  const chips: Chip[] = [];
  if (filters.from) chips.push({ key: 'from', text: `Completed from ${fmtDate(filters.from)}`, href: without('from') });
  if (filters.to) chips.push({ key: 'to', text: `Completed to ${fmtDate(filters.to)}`, href: without('to') });
  if (filters.clinician && !names.own)
    chips.push({ key: 'clinician', text: `Clinician: ${names.clinicians.find((c) => c.id === filters.clinician)?.name ?? 'unknown'}`, href: without('clinician') });
  if (filters.kind) chips.push({ key: 'kind', text: `Kind: ${CASE_KIND_LABELS[filters.kind as CaseKind] ?? filters.kind}`, href: without('kind') });
  for (const [key, value] of Object.entries(filters)) {
    if (!isLevelKey(key)) continue;
    const factor = key.slice(LEVEL_PREFIX.length) as FactorKey;
    const known = (FACTOR_KEYS as string[]).includes(factor);
    for (const code of new Set(value.split(',').map((c) => c.trim()).filter(Boolean))) {
      const name = !known
        ? code
        : factor === 'referrer'
          ? code === NO_REFERRER
            ? 'No referrer recorded'
            : (names.referrers?.find((r) => r.id === code)?.name ?? 'Referrer')
          : levelLabel(factor, code);
      chips.push({ key: `${key}=${code}`, text: `${known ? FACTORS[factor].label : key}: ${name}`, href: without(key, code) });
    }
  }
  return chips;
}

/** The active filters as removable chips (links: no script needed). */
export function FilterChips({ chips, clear }: { chips: Chip[]; clear: string }) {
  if (chips.length === 0) return null;
  return (
    <div className="flex flex-wrap items-center gap-2" aria-label="Active filters" role="group" data-testid="filter-chips">
      <span className="text-sm text-ink-700">Showing only:</span>
      {chips.map((c) => (
        <Link
          key={c.key}
          href={c.href}
          data-testid="filter-chip"
          aria-label={`Remove the filter ${c.text}`}
          className="inline-flex items-center gap-1 rounded-full border border-dura-700 bg-white px-3 py-0.5 text-sm text-ink-900 no-underline hover:bg-bone-100"
        >
          {c.text}
          <span aria-hidden="true" className="font-semibold text-dura-700">
            ×
          </span>
        </Link>
      ))}
      {chips.length > 1 && (
        <Link href={clear} className="text-sm">
          Remove all
        </Link>
      )}
    </div>
  );
}

export function queryOf(f: Record<string, string | undefined>, extra: Record<string, string> = {}): string {
  const q = new URLSearchParams();
  for (const [k, v] of Object.entries({ ...f, ...extra })) if (v) q.set(k, v);
  const s = q.toString();
  return s ? `?${s}` : '';
}

export const pct = (x: number | null | undefined, digits = 0) => (x === null || x === undefined ? '—' : `${(100 * x).toFixed(digits)}%`);

/** A p-value as the area writes it: three decimals, or "< 0.001". */
export const pText = (p: number) => (p < 0.001 ? '< 0.001' : p.toFixed(3));
/** "p = 0.012" or "p < 0.001" in a sentence. */
export const pIs = (p: number) => `p ${p < 0.001 ? '' : '= '}${pText(p)}`;

/** A rate as the area shows it: estimate, 95% interval, n; greyed with "few cases" under FEW_CASES. */
export function RateText({ r, testId }: { r: Rate; testId?: string }) {
  if (r.n === 0)
    return (
      <span className="text-ink-500" data-testid={testId}>
        — <span className="text-xs">(no cases)</span>
      </span>
    );
  return (
    <span className={r.few ? 'text-ink-500' : undefined} data-testid={testId} data-estimate={r.estimate ?? ''}>
      <strong className="font-semibold">{pct(r.estimate)}</strong>{' '}
      <span className="text-sm">
        ({pct(r.lower)}–{pct(r.upper)}; {r.x} of {r.n})
      </span>
      {r.few && <span className="ml-1 rounded border border-bone-300 px-1 text-xs">few cases</span>}
    </span>
  );
}

type Choices = readonly (readonly [value: string, label: string])[];
export const ENDPOINT_CHOICES: Choices = [
  ['healing', 'Healing'],
  ['tooth', 'Tooth survival'],
];
export const METHOD_CHOICES: Choices = [
  ['turnbull', 'Turnbull (failures found at visits)'],
  ['km', 'Kaplan–Meier (on visit dates)'],
];
export const FACTOR_CHOICES: Choices = FACTOR_KEYS.map((k) => [k, FACTORS[k].label] as const);

/** One select of a view's own form, with the service's problem with it. */
export function ChoiceSelect({ id, name, value, options, label, problems }: { id: string; name: string; value: string; options: Choices; label: string; problems: Record<string, string[]> }) {
  return (
    <div>
      <label htmlFor={id} className="field-label">
        {label}
      </label>
      <select id={id} name={name} defaultValue={value} className="field-input" aria-invalid={problems[name] ? true : undefined}>
        {options.map(([v, l]) => (
          <option key={v} value={v}>
            {l}
          </option>
        ))}
      </select>
      {problems[name] && <p className="field-error">{problems[name][0]}</p>}
    </div>
  );
}

/** The method of a figure in one plain line. */
export function Method({ children }: { children: ReactNode }) {
  return <p className="mt-1 text-xs text-ink-500">Method: {children}</p>;
}

const VIEWS = [
  { href: '/outcomes', label: 'Overview' },
  { href: '/outcomes/factor', label: 'By factor' },
  { href: '/outcomes/curves', label: 'Survival curves' },
  { href: '/outcomes/model', label: 'Multivariable' },
  { href: '/outcomes/clinicians', label: 'Clinician audit' },
  { href: '/outcomes/worklist', label: 'Non-healing worklist' },
] as const;

/** The lead's tab (reading.lead): reader agreement and the calibration exercise (issue 13). */
const LEAD_VIEWS = [{ href: '/outcomes/agreement', label: 'Reader agreement' }] as const;

/** The outcome views' tab strip; `lead` adds the lead's tabs (the whole-practice view, not a clinician's own). */
export function OutcomesTabs({ current, query = '', lead = false }: { current: string; query?: string; lead?: boolean }) {
  return (
    <nav aria-label="Outcome views" className="flex flex-wrap gap-2">
      {[...VIEWS, ...(lead ? LEAD_VIEWS : [])].map((v) => (
        <Link
          key={v.href}
          href={v.href === '/outcomes/agreement' ? v.href : `${v.href}${query}`}
          aria-current={v.href === current ? 'page' : undefined}
          className={`rounded-md border px-3 py-1 text-sm no-underline ${v.href === current ? 'border-dura-700 bg-dura-700 font-semibold text-white' : 'border-bone-300'}`}
        >
          {v.label}
        </Link>
      ))}
    </nav>
  );
}

type CsvView = 'overview' | 'factor' | 'curves' | 'model' | 'funnel' | 'worklist';
/** Where a view's "Download this table (CSV)" points: the export route, or the view's own route (the funnel, the worklist). */
function csvHref(view: CsvView, filters: Record<string, string>): string {
  if (view === 'funnel') return `/api/outcomes/funnel${queryOf(filters, { format: 'csv' })}`;
  if (view === 'worklist') return `/api/outcomes/worklist/export${queryOf(Object.fromEntries(FILTER_KEYS.map((k) => [k, filters[k]])))}`;
  return `/api/outcomes/export${queryOf(filters, { view })}`;
}

export function OutcomesHeader({
  current,
  filters,
  clinicians,
  own,
  problems,
  csvView,
  referrers,
  asOf,
}: {
  current: (typeof VIEWS)[number]['href'];
  filters: Record<string, string>;
  clinicians: { id: string; name: string }[];
  own: boolean;
  problems: Record<string, string[]>;
  csvView: CsvView;
  /** to name referrer level filters on the chips (the reports carry them) */
  referrers?: { id: string; name: string }[];
  /** when the figures' rows were read: a note when entries were saved since (the reports carry it) */
  asOf?: DataAsOf;
}) {
  const keep = sharedFilters(filters);
  const chips = filterChips(current, filters, { clinicians, referrers, own });
  const levelProblems = Object.entries(problems).filter(([k]) => isLevelKey(k));
  const problem = (k: string) => problems[k]?.[0];
  const field = (k: string) => ({
    id: `outcomes-${k}`,
    name: k,
    className: 'field-input',
    'aria-invalid': problem(k) ? true : undefined,
    'aria-describedby': problem(k) ? `outcomes-${k}-error` : undefined,
  });
  const error = (k: string) =>
    problem(k) && (
      <p id={`outcomes-${k}-error`} className="field-error">
        {problem(k)}
      </p>
    );
  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl">Outcomes</h1>
          <p className="mt-1 max-w-3xl text-ink-700">
            {own
              ? 'Healing and tooth survival of the teeth you treated, beside the practice’s overall figures.'
              : 'Healing and tooth survival of the practice’s treatments, for the period, clinician and kind chosen.'}
          </p>
        </div>
        <div className="flex flex-wrap gap-2">
          <a className="btn-secondary no-underline" href={csvHref(csvView, filters)} download>
            Download this table (CSV)
          </a>
          <ReportButton filters={filters} />
        </div>
      </div>
      <OutcomesTabs current={current} query={queryOf(keep)} lead={!own} />
      <form method="get" action={current} aria-label="Filter the outcomes" className="card grid gap-4 sm:grid-cols-2 lg:grid-cols-5">
        {(['factor', 'endpoint', 'method', 'covariates', 'lesionAs', 'paiAs', 'measure', 'adjust'] as const).map((k) => filters[k] && <input key={k} type="hidden" name={k} value={filters[k]} />)}
        {Object.entries(filters).map(([k, v]) => isLevelKey(k) && <input key={k} type="hidden" name={k} value={v} />)}
        <div>
          <label htmlFor="outcomes-from" className="field-label">
            Completed from
          </label>
          <input type="date" defaultValue={filters.from ?? ''} {...field('from')} />
          {error('from')}
        </div>
        <div>
          <label htmlFor="outcomes-to" className="field-label">
            Completed to
          </label>
          <input type="date" defaultValue={filters.to ?? ''} {...field('to')} />
          {error('to')}
        </div>
        <div>
          <label htmlFor="outcomes-clinician" className="field-label">
            Clinician
          </label>
          {own ? (
            <p className="text-sm text-ink-700">Your own cases</p>
          ) : (
            <select defaultValue={filters.clinician ?? ''} {...field('clinician')}>
              <option value="">Every clinician</option>
              {clinicians.map((c) => (
                <option key={c.id} value={c.id}>
                  {c.name}
                </option>
              ))}
            </select>
          )}
          {error('clinician')}
        </div>
        <div>
          <label htmlFor="outcomes-kind" className="field-label">
            Kind of treatment
          </label>
          <select defaultValue={filters.kind ?? ''} {...field('kind')}>
            <option value="">Every kind</option>
            {CASE_KINDS.map((k) => (
              <option key={k} value={k}>
                {CASE_KIND_LABELS[k]}
              </option>
            ))}
          </select>
          {error('kind')}
        </div>
        <div className="flex items-end gap-2">
          <button type="submit" className="btn-primary">
            Show
          </button>
          <Link href={current} className="btn-secondary no-underline">
            Clear
          </Link>
        </div>
      </form>
      <FilterChips chips={chips} clear={`${current}${queryOf(Object.fromEntries((['factor', 'endpoint', 'method'] as const).filter((k) => filters[k]).map((k) => [k, filters[k]!])))}`} />
      {levelProblems.map(([k, messages]) => (
        <p key={k} className="field-error" role="status">
          Filter {k}: {messages[0]}
        </p>
      ))}
      {asOf?.behind && (
        <Notice tone="info">
          Entries are being saved as you read: these figures may leave out those of the last {Math.max(1, Math.round(asOf.maxLagMs / 1000))} seconds, and catch up on their own.
        </Notice>
      )}
      <Caution text="Figures from the findings as entered, for the practice’s audit. They support clinical judgement and do not replace it; small groups vary by chance." />
    </div>
  );
}

export type { OutcomeFilter };
