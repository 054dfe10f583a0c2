'use client';
import { Bar, BarChart, CartesianGrid, ErrorBar, ResponsiveContainer, Tooltip, XAxis, YAxis } from 'recharts';

export interface RateMonth {
  month: string;
  rate: number;
  err: number[];
  n: number;
}

/** The follow-up rate by month as bars with Wilson 95% whiskers (recharts; loaded on demand). */
export function RateChart({ months }: { months: RateMonth[] }) {
  return (
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
  );
}
