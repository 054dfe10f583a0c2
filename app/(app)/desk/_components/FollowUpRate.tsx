'use client';
import { useQuery } from '@tanstack/react-query';
import dynamic from 'next/dynamic';
import type { FollowUpRateReport } from '@/lib/services/recall-rate';
import { BlockSkeleton } from '@/components/ui/Skeleton';
import { Notice } from '@/components/ui/Notice';
import { fmtDate } from '@/components/ui/format';
import { getJson } from './api';

// The chart library is loaded only when the chart is drawn, not with the desk (First Load JS).
const RateChart = dynamic(() => import('./RateChart').then((m) => m.RateChart), {
  ssr: false,
  loading: () => <p className="text-sm text-ink-500">Drawing the chart…</p>,
});

const pct = (x: number | null) => (x === null ? '—' : `${(x * 100).toFixed(0)}%`);

/** Follow-up rate (attended ÷ due) by milestone and by month, each with its n and 95% interval. */
export function FollowUpRate() {
  const q = useQuery({ queryKey: ['desk-rate'], queryFn: () => getJson<FollowUpRateReport>('/api/recall/rate') });
  if (q.isPending) return <BlockSkeleton label="Loading the follow-up rate" />;
  if (q.error) return <Notice tone="alert">{(q.error as Error).message}</Notice>;
  const r = q.data;
  const months = r.byMonth.map((m) => ({
    month: m.key,
    rate: m.rate === null ? 0 : m.rate * 100,
    err: m.interval && m.rate !== null ? [(m.rate - m.interval.lower) * 100, (m.interval.upper - m.rate) * 100] : [0, 0],
    n: m.due,
  }));
  return (
    <section aria-labelledby="rate-heading" className="card space-y-4">
      <div>
        <h2 id="rate-heading" className="text-xl">
          Follow-up rate
        </h2>
        <p className="text-sm text-ink-700">
          Attended ÷ due, for visits due {fmtDate(r.from)} to {fmtDate(r.to)}: <strong>{pct(r.overall.rate)}</strong> of {r.overall.due}
          {r.overall.interval ? ` (95% interval ${pct(r.overall.interval.lower)}–${pct(r.overall.interval.upper)}, Wilson)` : ''}. Open visits past
          their due date count as due.
        </p>
      </div>
      <div className="grid gap-6 lg:grid-cols-3">
        <table className="table-dense w-full" aria-label="Follow-up rate by milestone">
          <thead>
            <tr>
              <th scope="col">Visit</th>
              <th scope="col">Due</th>
              <th scope="col">Attended</th>
              <th scope="col">Rate (95% CI)</th>
            </tr>
          </thead>
          <tbody>
            {r.byMilestone.map((m) => (
              <tr key={m.key}>
                <td>{m.key} months</td>
                <td>{m.due}</td>
                <td>{m.attended}</td>
                <td>
                  {pct(m.rate)}
                  {m.interval ? ` (${pct(m.interval.lower)}–${pct(m.interval.upper)})` : ''}
                </td>
              </tr>
            ))}
          </tbody>
        </table>
        <figure className="lg:col-span-2" aria-label="Follow-up rate by month of the due date, with 95% intervals">
          <div className="h-56">
            <RateChart months={months} />
          </div>
          <figcaption className="text-xs text-ink-500">Bars: attended ÷ due per month of the due date; whiskers: Wilson 95% interval. n per month in the tooltip.</figcaption>
        </figure>
      </div>
    </section>
  );
}
