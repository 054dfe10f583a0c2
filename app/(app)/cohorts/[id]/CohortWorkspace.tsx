'use client';
import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import { useRouter } from 'next/navigation';
import { submitJson } from '@/components/forms/submitJson';
import { Field } from '@/components/ui/Field';
import { Notice } from '@/components/ui/Notice';
import { StateBadge } from '@/components/ui/StateBadge';
import { EXPORT_STATUS_WORDS, FINAL_EXPORT_STATUSES, type CohortExportStatus } from '@/lib/registry/cohort-status';
import type { CohortView, ExportView } from '@/lib/services/cohorts';

interface Props {
  cohort: CohortView;
  factors: { key: string; label: string; levels: { code: string; label: string }[] }[];
  variables: { key: string; label: string; always: boolean }[];
  kinds: { code: string; label: string }[];
  kDefault: number;
}

interface Counts {
  cases: number;
  patients: number;
  events: number;
  leftOutCases: number;
  leftOutPatients: number;
  filtersText: string;
}

const STATUS_LOOK: Record<CohortExportStatus, { tone: 'ok' | 'watch' | 'alert' | 'info' | 'neutral'; icon: string }> = {
  queued: { tone: 'neutral', icon: '…' },
  running: { tone: 'info', icon: '↻' },
  done: { tone: 'ok', icon: '✓' },
  failed: { tone: 'alert', icon: '✕' },
  cancelled: { tone: 'neutral', icon: '⊘' },
};

const list = (v: string | undefined) => (v ? v.split(',').filter(Boolean) : []);

/** The cohort's builder (filters left, live counts right), its saved versions and its exports with their progress. */
export function CohortWorkspace({ cohort, factors, variables, kinds, kDefault }: Props) {
  const router = useRouter();
  const latest = cohort.versions[0];
  const [filters, setFilters] = useState<Record<string, string>>(latest?.filters ?? {});
  const [chosen, setChosen] = useState<string[]>(latest?.variables ?? variables.filter((v) => !v.always).map((v) => v.key));
  const [k, setK] = useState<number>(latest?.k ?? kDefault);
  const [counts, setCounts] = useState<Counts | null>(null);
  const [problems, setProblems] = useState<Record<string, string[]>>({});
  const [message, setMessage] = useState<string | null>(null);
  const [saved, setSaved] = useState<string | null>(null);
  const [exports, setExports] = useState<ExportView[]>(cohort.exports);

  const set = (key: string, value: string) =>
    setFilters((f) => {
      const next = { ...f };
      if (value) next[key] = value;
      else delete next[key];
      return next;
    });
  const toggle = (key: string, code: string, on: boolean) => {
    const codes = new Set(list(filters[key]));
    if (on) codes.add(code);
    else codes.delete(code);
    set(key, [...codes].join(','));
  };

  // live counts, a moment after the last change
  const query = useMemo(() => new URLSearchParams(filters).toString(), [filters]);
  useEffect(() => {
    const ctrl = new AbortController();
    const t = setTimeout(async () => {
      try {
        const res = await fetch(`/api/cohorts/counts?${query}`, { signal: ctrl.signal });
        const body = (await res.json()) as Counts & { fieldErrors?: Record<string, string[]> };
        if (res.ok) {
          setCounts(body);
          setProblems({});
        } else setProblems(body.fieldErrors ?? {});
      } catch {
        /* aborted or offline: keep the last counts */
      }
    }, 250);
    return () => {
      clearTimeout(t);
      ctrl.abort();
    };
  }, [query]);

  // exports still under way are polled until they end (the list survives a reload: it comes from the server)
  const pending = exports.filter((e) => !FINAL_EXPORT_STATUSES.includes(e.status)).map((e) => e.id);
  const pendingKey = pending.join(',');
  const poll = useCallback(async (ids: string[]) => {
    const fresh = await Promise.all(
      ids.map(async (id) => {
        const res = await fetch(`/api/cohort-exports/${id}`);
        return res.ok ? ((await res.json()) as ExportView) : null;
      }),
    );
    setExports((all) => all.map((e) => fresh.find((f) => f?.id === e.id) ?? e));
  }, []);
  const timer = useRef<ReturnType<typeof setInterval> | null>(null);
  useEffect(() => {
    if (!pendingKey) return;
    const ids = pendingKey.split(',');
    timer.current = setInterval(() => void poll(ids).catch(() => undefined), 1000);
    return () => {
      if (timer.current) clearInterval(timer.current);
    };
  }, [pendingKey, poll]);

  const save = async () => {
    setMessage(null);
    setSaved(null);
    const r = await submitJson<{ number: number; unchanged?: true }>(`/api/cohorts/${cohort.id}/versions`, 'POST', { filters, variables: chosen, k });
    if (r.ok) {
      setSaved(r.data.unchanged ? `No change since version ${r.data.number}: nothing new to save.` : `Saved as version ${r.data.number}.`);
      router.refresh();
    } else {
      setProblems(r.fieldErrors);
      setMessage(r.message ?? 'The version could not be saved.');
    }
  };
  const startExport = async (version: number) => {
    setMessage(null);
    const r = await submitJson<ExportView>(`/api/cohorts/${cohort.id}/exports`, 'POST', { version });
    if (r.ok) setExports((all) => [r.data, ...all]);
    else setMessage(r.message ?? 'The export could not be started.');
  };
  const cancel = async (id: string) => {
    const r = await submitJson<ExportView>(`/api/cohort-exports/${id}/cancel`, 'POST', {});
    if (r.ok) setExports((all) => all.map((e) => (e.id === id ? r.data : e)));
  };
  const problem = (key: string) => problems[key]?.[0] ?? problems[`filters.${key}`]?.[0];

  return (
    <div className="space-y-8">
      <section aria-labelledby="builder" className="grid gap-6 lg:grid-cols-[minmax(0,2fr)_minmax(0,1fr)]">
        <div className="card space-y-5">
          <h2 id="builder" className="text-xl">
            Which cases
          </h2>
          <div className="grid gap-4 sm:grid-cols-2">
            <Field label="Completed from" type="date" value={filters.from ?? ''} onChange={(e) => set('from', e.target.value)} error={problem('from')} />
            <Field label="Completed to" type="date" value={filters.to ?? ''} onChange={(e) => set('to', e.target.value)} error={problem('to')} />
          </div>
          <div>
            <label htmlFor="cohort-kind" className="field-label">
              Kind of treatment
            </label>
            <select id="cohort-kind" className="field-input" value={filters.kind ?? ''} onChange={(e) => set('kind', e.target.value)}>
              <option value="">Every kind</option>
              {kinds.map((o) => (
                <option key={o.code} value={o.code}>
                  {o.label}
                </option>
              ))}
            </select>
          </div>
          <fieldset>
            <legend className="field-label">Clinicians (as codes; none ticked: every clinician)</legend>
            {cohort.clinicians.length === 0 ? (
              <p className="text-sm text-ink-500">No completed cases yet.</p>
            ) : (
              <div className="flex flex-wrap gap-3">
                {cohort.clinicians.map((code) => (
                  <label key={code} className="flex items-center gap-1 text-sm">
                    <input type="checkbox" checked={list(filters.clinicians).includes(code)} onChange={(e) => toggle('clinicians', code, e.target.checked)} />
                    {code}
                  </label>
                ))}
              </div>
            )}
            {problem('clinicians') && <p className="field-error">{problem('clinicians')}</p>}
          </fieldset>
          <div className="space-y-2">
            <p className="field-label">Factors (none ticked in a factor: every level)</p>
            {factors.map((f) => {
              const on = list(filters[`f.${f.key}`]);
              return (
                <details key={f.key} className="rounded-md border border-bone-200 px-3 py-2" open={on.length > 0}>
                  <summary className="cursor-pointer text-sm font-medium">
                    {f.label}
                    {on.length > 0 && <span className="ml-2 text-ink-500">({on.length} chosen)</span>}
                  </summary>
                  <div className="mt-2 flex flex-wrap gap-3">
                    {f.levels.map((l) => (
                      <label key={l.code} className="flex items-center gap-1 text-sm">
                        <input type="checkbox" checked={on.includes(l.code)} onChange={(e) => toggle(`f.${f.key}`, l.code, e.target.checked)} />
                        {l.label}
                      </label>
                    ))}
                  </div>
                  {problem(`f.${f.key}`) && <p className="field-error">{problem(`f.${f.key}`)}</p>}
                </details>
              );
            })}
          </div>
          <details className="rounded-md border border-bone-200 px-3 py-2">
            <summary className="cursor-pointer text-sm font-medium">
              Variables in the archive ({chosen.length} chosen; ids, endpoints and outcomes always)
            </summary>
            <div className="mt-2 grid gap-1 sm:grid-cols-2">
              {variables
                .filter((v) => !v.always)
                .map((v) => (
                  <label key={v.key} className="flex items-center gap-1 text-sm">
                    <input type="checkbox" checked={chosen.includes(v.key)} onChange={(e) => setChosen((c) => (e.target.checked ? [...c, v.key] : c.filter((x) => x !== v.key)))} />
                    {v.label}
                  </label>
                ))}
            </div>
            {problems.variables && <p className="field-error">{problems.variables[0]}</p>}
          </details>
          <div className="max-w-48">
            <Field label="k (smallest group on the quasi-identifiers)" type="number" min={2} max={50} value={k} onChange={(e) => setK(Number(e.target.value))} error={problems.k?.[0]} />
          </div>
          <div className="flex flex-wrap items-center gap-3">
            <button type="button" className="btn-primary" onClick={() => void save()}>
              Save as version {(latest?.number ?? 0) + 1}
            </button>
            {saved && <Notice tone="ok">{saved}</Notice>}
          </div>
          {message && <Notice tone="alert">{message}</Notice>}
        </div>
        <aside className="card h-fit space-y-3 lg:sticky lg:top-4" aria-labelledby="counts" aria-live="polite">
          <h2 id="counts" className="text-xl">
            In this cohort
          </h2>
          {counts ? (
            <>
              <dl className="grid grid-cols-3 gap-2 text-center">
                <div>
                  <dt className="text-xs text-ink-500">Cases</dt>
                  <dd className="text-2xl font-semibold" data-testid="count-cases">
                    {counts.cases.toLocaleString('en-GB')}
                  </dd>
                </div>
                <div>
                  <dt className="text-xs text-ink-500">Patients</dt>
                  <dd className="text-2xl font-semibold" data-testid="count-patients">
                    {counts.patients.toLocaleString('en-GB')}
                  </dd>
                </div>
                <div>
                  <dt className="text-xs text-ink-500">Events</dt>
                  <dd className="text-2xl font-semibold" data-testid="count-events">
                    {counts.events.toLocaleString('en-GB')}
                  </dd>
                </div>
              </dl>
              <p className="text-sm text-ink-700" data-testid="count-left-out">
                Left out for want of research consent: {counts.leftOutCases.toLocaleString('en-GB')} case{counts.leftOutCases === 1 ? '' : 's'} of {counts.leftOutPatients.toLocaleString('en-GB')}{' '}
                patient{counts.leftOutPatients === 1 ? '' : 's'}.
              </p>
              <p className="text-xs text-ink-500">Events: failures on the healing endpoint (disease, retreatment, apical surgery or extraction). Filters: {counts.filtersText}.</p>
            </>
          ) : (
            <p className="text-sm text-ink-500">Counting…</p>
          )}
        </aside>
      </section>

      <section aria-labelledby="versions" className="space-y-3">
        <h2 id="versions" className="text-xl">
          Saved versions
        </h2>
        {cohort.versions.length === 0 ? (
          <p className="card border-dashed text-ink-700">No saved version yet: an export is always of a saved version, so it can be made again. Save the filters above first.</p>
        ) : (
          <ul className="space-y-2">
            {cohort.versions.map((v) => (
              <li key={v.number} className="card flex flex-wrap items-center justify-between gap-3 py-3">
                <div>
                  <p className="font-semibold">Version {v.number}</p>
                  <p className="text-sm text-ink-700">
                    {v.filtersText} · {v.variables.length} chosen variables · k = {v.k}
                  </p>
                </div>
                <button type="button" className="btn-secondary" onClick={() => void startExport(v.number)}>
                  Export version {v.number}
                </button>
              </li>
            ))}
          </ul>
        )}
      </section>

      <section aria-labelledby="exports" className="space-y-3">
        <h2 id="exports" className="text-xl">
          Exports
        </h2>
        {exports.length === 0 ? (
          <p className="text-sm text-ink-700">No export yet.</p>
        ) : (
          <ul className="space-y-2">
            {exports.map((e) => {
              const pct = e.progress.total > 0 ? Math.min(100, Math.round((100 * e.progress.done) / e.progress.total)) : e.status === 'done' ? 100 : 0;
              const look = STATUS_LOOK[e.status];
              return (
                <li key={e.id} className="card space-y-2 py-3" data-testid="export-row" data-status={e.status}>
                  <div className="flex flex-wrap items-center justify-between gap-2">
                    <p className="font-semibold">
                      Version {e.version} <StateBadge tone={look.tone} icon={look.icon} label={e.cancelRequested && e.status === 'running' ? 'Cancelling' : EXPORT_STATUS_WORDS[e.status]} />
                    </p>
                    <div className="flex gap-2">
                      {(e.status === 'queued' || e.status === 'running') && !e.cancelRequested && (
                        <button type="button" className="btn-secondary" onClick={() => void cancel(e.id)}>
                          Cancel
                        </button>
                      )}
                      {e.status === 'done' && e.downloadUrl && (
                        <a className="btn-primary no-underline" href={e.downloadUrl} download>
                          Download archive
                        </a>
                      )}
                    </div>
                  </div>
                  {(e.status === 'queued' || e.status === 'running') && (
                    <div>
                      <div className="h-2 w-full overflow-hidden rounded bg-bone-200" role="progressbar" aria-label={`Export of version ${e.version}`} aria-valuemin={0} aria-valuemax={100} aria-valuenow={pct}>
                        <div className="h-2 bg-dura-600 transition-all" style={{ width: `${pct}%` }} />
                      </div>
                      <p className="mt-1 text-xs text-ink-500">{e.status === 'queued' ? (e.error ? `The last attempt failed: ${e.error} It will be tried again in a moment.` : 'Waiting for the worker…') : `${pct}% (counting, then writing the files)`}</p>
                    </div>
                  )}
                  {e.status === 'done' && (
                    <p className="text-sm text-ink-700">
                      {e.figures.cases ?? 0} cases of {e.figures.patients ?? 0} patients, {e.figures.reviews ?? 0} reviews; {e.figures.generalised ?? 0} generalised and {e.figures.suppressed ?? 0}{' '}
                      suppressed to reach k; smallest l {e.figures.minL ?? '—'}. The link expires in three days (a new one each time the page opens).
                    </p>
                  )}
                  {e.status === 'failed' && <p className="text-sm text-state-alert">{e.error ?? 'The export failed.'} Start it again.</p>}
                </li>
              );
            })}
          </ul>
        )}
      </section>
    </div>
  );
}
