'use client';
import { useQuery } from '@tanstack/react-query';
import { Bar, BarChart, CartesianGrid, ErrorBar, ResponsiveContainer, Tooltip, XAxis, YAxis } from 'recharts';
import type { FollowUpRateReport } from '@/lib/services/recall-rate';
import { BlockSkeleton } from '@/components/ui/Skeleton';
import { Notice } from '@/components/ui/Notice';
import { getJson } from './api';

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
          Attended ÷ due, for visits due {r.from} to {r.to}: <strong>{pct(r.overall.rate)}</strong> of {r.overall.due}
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
            <ResponsiveContainer width="100%" height="100%">
              <BarChart data={months} margin={{ top: 8, right: 8, bottom: 0, left: -16 }}>
                <CartesianGrid strokeDasharray="3 3" stroke="#e4ded3" />
                <XAxis dataKey="month" tick={{ fontSize: 11 }} />
                <YAxis domain={[0, 100]} unit="%" tick={{ fontSize: 11 }} />
                <Tooltip formatter={(v, _n, item) => [`${Number(v).toFixed(0)}% of ${(item.payload as { n: number }).n}`, 'Attended']} />
                <Bar dataKey="rate" fill="#5a51a8" isAnimationActive={false}>
                  <ErrorBar dataKey="err" stroke="#1d2225" width={4} />
                </Bar>
              </BarChart>
            </ResponsiveContainer>
          </div>
          <figcaption className="text-xs text-ink-500">Bars: attended ÷ due per month of the due date; whiskers: Wilson 95% interval. n per month in the tooltip.</figcaption>
        </figure>
      </div>
    </section>
  );
}
