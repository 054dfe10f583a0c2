import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { URGENCY_LABELS, WORKLIST_CAUTION, type Urgency } from '@/lib/outcomes/worklist';
import { outcomesWorklist, type WorklistRow } from '@/lib/services/outcomes-worklist';
import { Caution } from '@/components/ui/Caution';
import { EmptyState } from '@/components/ui/EmptyState';
import { Notice } from '@/components/ui/Notice';
import { Pager } from '@/components/ui/Pager';
import { OutcomeBadge, StateBadge } from '@/components/ui/StateBadge';
import { fmtDate } from '@/components/ui/format';
import { PAGE_SIZE } from '@/lib/schemas/paging';
import { filtersOf, Method, OutcomesHeader, sharedFilters } from '../_components/parts';
import { DecisionForm } from './DecisionFormLazy';
import { viewData } from '../_components/viewData';

export const metadata: Metadata = { title: 'Non-healing worklist' };

const URGENCY_LOOK: Record<Urgency, { tone: 'alert' | 'watch' | 'info'; icon: string }> = {
  decide: { tone: 'alert', icon: '!' },
  overdue: { tone: 'watch', icon: '⏰' },
  in_hand: { tone: 'info', icon: '✓' },
};

/** A whole number from the URL within bounds, else the default (a bad page number shows the first page, not an error). */
const wholeOr = (v: unknown, min: number, max: number, fallback: number) => {
  const n = typeof v === 'string' && /^\d+$/.test(v) ? Number(v) : NaN;
  return Number.isSafeInteger(n) && n >= min && n <= max ? n : fallback;
};

export default async function OutcomesWorklistPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { em, actor } = await requireActor('outcomes.read', '/outcomes/worklist');
  const params = await searchParams;
  const filters = filtersOf(params);
  for (const k of ['factor', 'endpoint', 'method']) delete filters[k];
  // the list is paged on the server (urgency order); the filters and the page live in the URL
  const page = wholeOr(params.page, 1, Number.MAX_SAFE_INTEGER, 1);
  const pageSize = wholeOr(params.pageSize, 1, 200, PAGE_SIZE);
  const { data, problems, own } = await viewData(actor, () => outcomesWorklist(em, actor, { ...filters, page, pageSize }));
  const count = (u: Urgency) => data?.counts[u] ?? 0;
  const pagerQuery = { ...sharedFilters(filters), pageSize: pageSize === PAGE_SIZE ? undefined : String(pageSize) };
  return (
    <div className="space-y-8">
      <OutcomesHeader
        current="/outcomes/worklist"
        asOf={data?.asOf}
        filters={filters}
        clinicians={data?.clinicians ?? []}
        own={own}
        problems={problems}
        csvView="worklist"
      />
      {!data && <Notice tone="alert">Some filters need attention; nothing is shown until they are corrected.</Notice>}
      {data && (
        <section aria-labelledby="worklist-title" className="space-y-3">
          <h2 id="worklist-title" className="text-2xl">
            Non-healing worklist
          </h2>
          <p className="max-w-3xl text-ink-700">
            {data.own ? 'The teeth you treated' : 'The practice’s treated teeth'} whose latest review found disease, or found the lesion still healing or
            too early to judge and has not been seen since, more than four years after treatment.{' '}
            {data.own ? 'Record the next step for each.' : 'The clinician who treated the tooth records the next step.'}
          </p>
          <Caution text={WORKLIST_CAUTION} />
          {data.total > 0 && (
            <p data-testid="worklist-counts" className="text-sm">
              {data.total} {data.total === 1 ? 'case' : 'cases'}: {count('decide')} to decide, {count('overdue')} overdue, {count('in_hand')} in hand.
              {data.total > data.pageSize && ` Showing ${(data.page - 1) * data.pageSize + 1}–${(data.page - 1) * data.pageSize + data.rows.length}, most urgent first.`}
            </p>
          )}
          {data.rows.length === 0 ? (
            <EmptyState title="No case needs a decision">
              No completed case in this filter has disease at its latest review, and none is still healing or uncertain more than four years after
              treatment. Cases appear here as reviews are recorded.
            </EmptyState>
          ) : (
            <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
              <table className="table-dense table-stack w-full" aria-label="Non-healing worklist">
                <thead>
                  <tr>
                    <th scope="col">Urgency</th>
                    <th scope="col">Tooth</th>
                    {data.rows[0]!.patient && <th scope="col">Patient</th>}
                    <th scope="col">Clinician</th>
                    <th scope="col">Latest review</th>
                    <th scope="col">Since completion</th>
                    <th scope="col">Next step</th>
                  </tr>
                </thead>
                <tbody>
                  {data.rows.map((r) => (
                    <Row key={r.caseId} r={r} />
                  ))}
                </tbody>
              </table>
            </div>
          )}
          {data.total > data.pageSize && <Pager page={data.page} pageSize={data.pageSize} total={data.total} basePath="/outcomes/worklist" query={pagerQuery} />}
          <Method>
            listed when the current outcome (Lamina’s scoring rules on the latest review, the practice’s minimum observation time; a retreatment,
            surgery or extraction found at a review ends the case) is disease, or is healing or uncertain more than 1461 days (four years) after
            completion — the European Society of Endodontology’s quality guidelines (2006) follow a lesion that is unchanged or smaller for up to
            four years. A tooth whose later case is completed is left out. Order: to decide (symptomatic disease, disease, past four years; oldest
            review first), overdue (a re-review or extraction whose date has passed), in hand (by date). A step recorded before the latest review
            needs deciding again.
          </Method>
        </section>
      )}
    </div>
  );
}

function Row({ r }: { r: WorklistRow }) {
  const d = r.decision;
  return (
    <tr data-testid="worklist-row" data-case={r.caseId} data-urgency={r.urgency}>
      <td data-label="Urgency">
        <StateBadge {...URGENCY_LOOK[r.urgency]} label={URGENCY_LABELS[r.urgency]} />
      </td>
      <td data-label="Tooth">
        <Link href={`/cases/${r.caseId}`} className="font-semibold">
          Tooth {r.tooth}
        </Link>
        <div className="text-xs text-ink-500">{r.kindLabel}</div>
      </td>
      {r.patient && (
        <td data-label="Patient">
          <Link href={`/patients/${r.patient.id}`}>{r.patient.name}</Link>
          <div className="text-xs text-ink-500">{r.patient.registryNumber}</div>
        </td>
      )}
      <td data-label="Clinician">{r.clinician.name}</td>
      <td data-label="Latest review">
        <div className="flex flex-wrap items-center gap-2">
          <OutcomeBadge outcome={r.outcome} />
          <span>{fmtDate(r.latestReviewDate)}</span>
        </div>
        <div className="text-xs text-ink-500">
          {r.reasonLabel}
          {r.symptomatic ? '; signs or symptoms recorded' : ''}
          {r.noOpenVisit ? '; no recall visit open' : ''}
        </div>
      </td>
      <td data-label="Since completion">
        {r.yearsSinceCompletion.toFixed(1)} years
        <div className="text-xs text-ink-500">completed {fmtDate(r.completionDate)}</div>
      </td>
      <td data-label="Next step" className="min-w-64">
        {d ? (
          <div data-testid="worklist-decision">
            <strong>{d.stepLabel}</strong> — {d.step === 'watch' ? 're-review' : d.step === 'refer' ? 'referred' : 'planned'} {fmtDate(d.date)}
            {d.note && <div className="text-sm">“{d.note}”</div>}
            <div className="text-xs text-ink-500">
              Recorded by {d.decidedBy} on {fmtDate(d.decidedOn)}
              {r.decisions > 1 ? ` (${r.decisions - 1} earlier ${r.decisions === 2 ? 'step' : 'steps'} kept)` : ''}
            </div>
            {!d.stands && <div className="text-xs font-semibold text-state-alert">Recorded before the latest review: decide again.</div>}
          </div>
        ) : (
          <span className="text-ink-500">None recorded</span>
        )}
        {r.laterCase && (
          <div className="mt-1 text-sm" data-testid="worklist-later-case">
            <Link href={`/cases/${r.laterCase.id}`}>
              {r.laterCase.kindLabel}, started {fmtDate(r.laterCase.startDate)}
            </Link>{' '}
            <span className="text-xs text-ink-500">{r.laterCase.completionDate ? `completed ${fmtDate(r.laterCase.completionDate)}` : 'in progress'}</span>
          </div>
        )}
        {r.canDecide && (
          <details className="mt-2">
            <summary className="cursor-pointer text-sm font-semibold text-dura-700">{d ? 'Change the next step' : 'Record the next step'}</summary>
            <div className="mt-2">
              <DecisionForm caseId={r.caseId} tooth={r.tooth} current={d && d.stands ? { step: d.step, date: d.date, note: d.note } : null} />
            </div>
          </details>
        )}
      </td>
    </tr>
  );
}
