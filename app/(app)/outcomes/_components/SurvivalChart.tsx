'use client';
import { CartesianGrid, Legend, Line, LineChart, ResponsiveContainer, Scatter, Tooltip, XAxis, YAxis, ComposedChart } from 'recharts';

export interface ChartSeries {
  name: string;
  points: { time: number; value: number; lower?: number; upper?: number }[];
  censored?: { time: number; value: number }[];
}

/** Lamina's palette with a dash pattern per series, so the curves read in black and white too. */
const STROKES = ['#5a51a8', '#1d2225', '#a0522d', '#2f6f5e', '#8a6d1d', '#7a3b69', '#3b5b8a', '#6b6b6b'];
const DASHES = ['', '6 3', '2 2', '10 4 2 4', '1 3', '8 2 2 2 2 2', '4 4', '12 3'];

/** Step curves (survival or cumulative incidence) in months, with an optional 95% band (thin dotted) and censoring marks (+). */
export function SurvivalChart({ series, yLabel, band }: { series: ChartSeries[]; yLabel: string; band: boolean }) {
  const month = (d: number) => Math.round((d / 30.4375) * 10) / 10;
  // The axis spans the values shown (to the nearest 10%), so small differences near 100% stay visible.
  const values = series.flatMap((s) => s.points.flatMap((p) => [p.value, ...(band && p.lower !== undefined ? [p.lower] : [])]));
  const high = series.flatMap((s) => s.points.flatMap((p) => [p.value, ...(band && p.upper !== undefined ? [p.upper] : [])]));
  const top = Math.min(1, Math.max(0.1, Math.ceil(Math.max(0, ...high) * 10) / 10));
  const yDomain: [number, number] = [Math.max(0, Math.min(top - 0.1, Math.floor(Math.min(1, ...values) * 10) / 10)), top];
  const Chart = series.some((s) => s.censored?.length) ? ComposedChart : LineChart;
  return (
    <ResponsiveContainer width="100%" height="100%">
      <Chart margin={{ top: 8, right: 12, bottom: 8, left: -8 }}>
        <CartesianGrid strokeDasharray="3 3" stroke="#e4ded3" />
        <XAxis type="number" dataKey="month" domain={[0, 60]} ticks={[0, 6, 12, 24, 36, 48, 60]} unit=" mo" tick={{ fontSize: 11 }} allowDuplicatedCategory={false} />
        <YAxis type="number" domain={yDomain} allowDataOverflow tickFormatter={(v: number) => `${Math.round(v * 100)}%`} tick={{ fontSize: 11 }} label={{ value: yLabel, angle: -90, position: 'insideLeft', offset: 16, fontSize: 11 }} />
        <Tooltip formatter={(v) => `${(Number(v) * 100).toFixed(1)}%`} labelFormatter={(l) => `${l} months`} />
        <Legend wrapperStyle={{ fontSize: 12 }} />
        {series.flatMap((s, i) => {
          const data = s.points.map((p) => ({ month: month(p.time), value: p.value, lower: p.lower, upper: p.upper }));
          const stroke = STROKES[i % STROKES.length];
          const lines = [
            <Line key={`${s.name}-v`} data={data} dataKey="value" name={s.name} type="stepAfter" dot={false} stroke={stroke} strokeDasharray={DASHES[i % DASHES.length]} strokeWidth={2} isAnimationActive={false} />,
          ];
          if (band)
            lines.push(
              <Line key={`${s.name}-l`} data={data} dataKey="lower" name={`${s.name}: 95% band`} legendType="none" type="stepAfter" dot={false} stroke={stroke} strokeOpacity={0.5} strokeDasharray="1 2" strokeWidth={1} isAnimationActive={false} />,
              <Line key={`${s.name}-u`} data={data} dataKey="upper" name={`${s.name}: 95% band `} legendType="none" type="stepAfter" dot={false} stroke={stroke} strokeOpacity={0.5} strokeDasharray="1 2" strokeWidth={1} isAnimationActive={false} />,
            );
          if (s.censored?.length)
            lines.push(
              <Scatter key={`${s.name}-c`} data={s.censored.map((c) => ({ month: month(c.time), value: c.value }))} dataKey="value" name={`${s.name}: censored`} legendType="none" fill={stroke} shape="cross" isAnimationActive={false} />,
            );
          return lines;
        })}
      </Chart>
    </ResponsiveContainer>
  );
}
