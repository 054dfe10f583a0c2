import type { Overview, SuccessFigure } from '@/lib/outcomes';
import { COMPLETENESS_WARNING, TURNBULL_MAX } from '@/lib/outcomes';
import { Notice } from '@/components/ui/Notice';
import { Method, pct, RateText } from './parts';

const atLabel = (f: SuccessFigure) => (f.at === 'latest' ? 'Latest review, 12 months or later' : `${f.at} months`);

/** The overview's figures for one set of cases (the selection, or the practice overall for a clinician). */
export function OverviewFigures({ o, idPrefix, title }: { o: Overview; idPrefix: string; title: string }) {
  const low = o.completeness.filter((c) => c.rate.n > 0 && (c.rate.estimate ?? 0) < COMPLETENESS_WARNING);
  return (
    <section aria-labelledby={`${idPrefix}-title`} className="space-y-6" data-testid={`${idPrefix}-figures`}>
      <h2 id={`${idPrefix}-title`} className="text-2xl">
        {title}
      </h2>
      {o.warning && (
        <Notice tone="alert" role="status">
          Follow-up is incomplete: {low.map((c) => `${pct(c.rate.estimate)} seen at ${c.months} months`).join(', ')} (below {pct(COMPLETENESS_WARNING)}). The
          figures below describe the reviewed cases, not every case treated.
        </Notice>
      )}
      <div className="grid gap-4 md:grid-cols-3">
        <div className="card">
          <h3 className="text-sm font-semibold text-ink-700">Cases followed</h3>
          <p className="mt-1 text-3xl" data-testid={`${idPrefix}-cases`}>
            {o.cases}
          </p>
          <p className="text-sm text-ink-700">{o.reviewed} with at least one review</p>
          <Method>completed cases in the filter; archived cases and patients left out.</Method>
        </div>
        <div className="card">
          <h3 className="text-sm font-semibold text-ink-700">Follow-up completeness</h3>
          <ul className="mt-1 space-y-1">
            {o.completeness.map((c) => (
              <li key={c.months}>
                At {c.months} months: <RateText r={c.rate} testId={`${idPrefix}-completeness-${c.months}`} />
              </li>
            ))}
          </ul>
          <Method>cases seen within 3 months (6 after a year) of the milestone, or with an event before, ÷ cases whose window has ended; Wilson 95% interval.</Method>
        </div>
        <div className="card">
          <h3 className="text-sm font-semibold text-ink-700">Lost to follow-up</h3>
          <p className="mt-1">
            <RateText r={o.lost} testId={`${idPrefix}-lost`} />
          </p>
          {o.lostStillInvited > 0 ? (
            <p className="text-sm text-ink-600" data-testid={`${idPrefix}-lost-invited`}>
              {o.lostStillInvited} of them still being invited by the desk
            </p>
          ) : null}
          <Method>
            cases due for the 12-month review with no outcome known a year or more after treatment (no review from day 365 on, no extraction, retreatment or surgery)
            ÷ cases due for the 12-month review, whatever the desk recorded (a visit closed as lost is one reason, and a case seen later is not lost); Wilson 95%
            interval.
          </Method>
        </div>
      </div>

      <div>
        <h3 className="text-xl">Success</h3>
        <div className="mt-2 overflow-x-auto rounded-lg border border-bone-200 bg-white">
          <table className="table-dense table-stack w-full" aria-label={`${title}: success`}>
            <thead>
              <tr>
                <th scope="col">When</th>
                <th scope="col">Strict (healed)</th>
                <th scope="col">If the cases lost to follow-up had all succeeded / failed</th>
                <th scope="col">Lenient (healed or healing)</th>
                <th scope="col">Uncertain, lost to follow-up</th>
              </tr>
            </thead>
            <tbody>
              {o.success.map((f) => (
                <tr key={String(f.at)} data-testid={`${idPrefix}-success-${f.at}`}>
                  <td data-label="When">{atLabel(f)}</td>
                  <td data-label="Strict">
                    <RateText r={f.strict} />
                  </td>
                  <td data-label="Best / worst">
                    {f.missing === 0 ? (
                      <span className="text-sm text-ink-500">none lost</span>
                    ) : (
                      <span className="text-sm">
                        best {pct(f.strictBounds.best)} · worst {pct(f.strictBounds.worst)}{' '}
                        <span className="text-ink-500">
                          (lenient {pct(f.lenientBounds.best)} · {pct(f.lenientBounds.worst)})
                        </span>
                      </span>
                    )}
                  </td>
                  <td data-label="Lenient">
                    <RateText r={f.lenient} />
                  </td>
                  <td data-label="Not counted" className="text-sm">
                    {f.uncertain} uncertain, {f.missing} lost
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
        <Method>
          outcome of the review nearest the milestone (within 3 months at 12 months, 6 months later) by Lamina’s scoring rules, a retreatment, surgery or extraction found
          earlier counting as failure; “uncertain” (an unchanged lesion before the minimum observation time) is neither and is left out of n; Wilson 95% interval; best and
          worst case count the cases lost to follow-up then (due, outcome not known) as all successes or all failures.
        </Method>
      </div>

      <div>
        <h3 className="text-xl">Tooth survival</h3>
        <div className="mt-2 overflow-x-auto rounded-lg border border-bone-200 bg-white">
          <table className="table-dense table-stack w-full" aria-label={`${title}: tooth survival`}>
            <thead>
              <tr>
                <th scope="col">After</th>
                <th scope="col">Kaplan–Meier (95% interval)</th>
                <th scope="col">Turnbull</th>
                <th scope="col">Teeth still followed</th>
              </tr>
            </thead>
            <tbody>
              {o.survival.map((s) => (
                <tr key={s.years} data-testid={`${idPrefix}-survival-${s.years}`}>
                  <td data-label="After">
                    {s.years} year{s.years > 1 ? 's' : ''}
                  </td>
                  {o.teeth === 0 ? (
                    <td data-label="Kaplan–Meier">
                      — <span className="text-sm text-ink-500">(no teeth)</span>
                    </td>
                  ) : (
                    <td data-label="Kaplan–Meier" className={s.km.nRisk < 20 ? 'text-ink-500' : undefined}>
                      <strong className="font-semibold">{pct(s.km.survival, 1)}</strong>{' '}
                      <span className="text-sm">
                        ({pct(s.km.lower, 1)}–{pct(s.km.upper, 1)})
                      </span>
                      {s.km.nRisk < 20 && <span className="ml-1 rounded border border-bone-300 px-1 text-xs">few cases</span>}
                    </td>
                  )}
                  <td data-label="Turnbull">{o.teeth === 0 ? '—' : s.turnbull === null ? <span className="text-sm text-ink-500">not computed</span> : pct(s.turnbull, 1)}</td>
                  <td data-label="Followed">
                    {s.km.nRisk} of {o.teeth}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
        <Method>
          {o.teeth} teeth, {o.toothLossEvents} extracted; each tooth from its earliest case, followed through its retreatment or surgery. Kaplan–Meier with the
          extraction at the review that found it (log-scale 95% interval); Turnbull for extractions found between visits
          {o.turnbullComputed || o.teeth === 0
            ? ''
            : o.teeth <= TURNBULL_MAX
              ? ' — it did not converge on these teeth, Kaplan–Meier alone'
              : ` — not computed above ${TURNBULL_MAX.toLocaleString('en-GB')} teeth (it takes too long), Kaplan–Meier alone`}
          .
        </Method>
      </div>
    </section>
  );
}
