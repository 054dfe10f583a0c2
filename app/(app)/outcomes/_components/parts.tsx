import Link from 'next/link';
import type { ReactNode } from 'react';
import { CASE_KINDS, CASE_KIND_LABELS } from '@/lib/registry/case-kinds';
import type { OutcomeFilter, Rate } from '@/lib/outcomes';
import { Caution } from '@/components/ui/Caution';

export const FILTER_KEYS = ['from', 'to', 'clinician', 'kind'] as const;

/** The filters of the URL (strings as typed; the service validates them). */
export function filtersOf(params: Record<string, string | string[] | undefined>): Record<string, string> {
  const out: Record<string, string> = {};
  for (const k of [...FILTER_KEYS, 'factor', 'endpoint', 'method', 'stratum']) {
    const v = params[k];
    if (typeof v === 'string' && v !== '') out[k] = v;
  }
  return out;
}

export function queryOf(f: Record<string, string | undefined>, extra: Record<string, string> = {}): string {
  const q = new URLSearchParams();
  for (const [k, v] of Object.entries({ ...f, ...extra })) if (v) q.set(k, v);
  const s = q.toString();
  return s ? `?${s}` : '';
}

export const pct = (x: number | null | undefined, digits = 0) => (x === null || x === undefined ? '—' : `${(100 * x).toFixed(digits)}%`);

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

/** The method of a figure in one plain line. */
export function Method({ children }: { children: ReactNode }) {
  return <p className="mt-1 text-xs text-ink-500">Method: {children}</p>;
}

const VIEWS = [
  { href: '/outcomes', label: 'Overview' },
  { href: '/outcomes/factor', label: 'By factor' },
  { href: '/outcomes/curves', label: 'Survival curves' },
] as const;

export function OutcomesHeader({
  current,
  filters,
  clinicians,
  own,
  problems,
  csvView,
}: {
  current: (typeof VIEWS)[number]['href'];
  filters: Record<string, string>;
  clinicians: { id: string; name: string }[];
  own: boolean;
  problems: Record<string, string[]>;
  csvView: 'overview' | 'factor' | 'curves';
}) {
  const keep = Object.fromEntries(FILTER_KEYS.map((k) => [k, filters[k]]));
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
        <a className="btn-secondary no-underline" href={`/api/outcomes/export${queryOf(filters, { view: csvView })}`} download>
          Download this table (CSV)
        </a>
      </div>
      <nav aria-label="Outcome views" className="flex flex-wrap gap-2">
        {VIEWS.map((v) => (
          <Link
            key={v.href}
            href={`${v.href}${queryOf(keep)}`}
            aria-current={v.href === current ? 'page' : undefined}
            className={`rounded-md border px-3 py-1 text-sm no-underline ${v.href === current ? 'border-dura-700 bg-dura-700 font-semibold text-white' : 'border-bone-300'}`}
          >
            {v.label}
          </Link>
        ))}
      </nav>
      <form method="get" action={current} aria-label="Filter the outcomes" className="card grid gap-4 sm:grid-cols-2 lg:grid-cols-5">
        {(['factor', 'endpoint', 'method'] as const).map((k) => filters[k] && <input key={k} type="hidden" name={k} value={filters[k]} />)}
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
      <Caution text="Figures from the findings as entered, for the practice’s audit. They support clinical judgement and do not replace it; small groups vary by chance." />
    </div>
  );
}

export type { OutcomeFilter };
