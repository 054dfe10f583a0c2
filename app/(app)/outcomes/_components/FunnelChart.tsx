'use client';
import { CartesianGrid, ComposedChart, LabelList, Legend, Line, ReferenceLine, ResponsiveContainer, Scatter, Tooltip, XAxis, YAxis } from 'recharts';

export interface FunnelChartPoint {
  key: string;
  label: string;
  n: number;
  value: number;
  highlighted: boolean;
  /** the short text beside the point (a number keyed to the table, or "You"): names beside close points would overlap */
  mark: string;
  /** show the mark beside the point (the lead: every point; a clinician: their own) */
  named: boolean;
}

export interface FunnelChartProps {
  points: FunnelChartPoint[];
  curve: { n: number; lower95: number; upper95: number; lower998: number; upper998: number }[];
  centre: number | null;
  references: { rate: number; label: string }[];
  yLabel: string;
}

const pct = (v: number) => `${Math.round(v * 100)}%`;

/**
 * The funnel plot: x = judged cases, y = the rate; the practice's rate as the centre line, the 95%
 * (dashed) and 99.8% (dotted) limits, the literature lines (dash-dot, labelled with their source),
 * and a point per clinician; the highlighted one larger, darker and named, so it reads without colour.
 */
export function FunnelChart({ points, curve, centre, references, yLabel }: FunnelChartProps) {
  const maxN = Math.max(10, ...curve.map((c) => c.n), ...points.map((p) => p.n));
  const plain = points.filter((p) => !p.highlighted).map((p) => ({ n: p.n, value: p.value, label: p.named ? p.mark : '' }));
  const marked = points.filter((p) => p.highlighted).map((p) => ({ n: p.n, value: p.value, label: p.mark, name: p.label }));
  // the practice's rate as a line across the plot, named in the legend (a label on the line met the points beside it)
  const centreLine = centre === null ? [] : [{ n: 0, practice: centre }, { n: maxN, practice: centre }];
  return (
    <ResponsiveContainer width="100%" height="100%">
      <ComposedChart margin={{ top: 12, right: 16, bottom: 16, left: 0 }}>
        <CartesianGrid strokeDasharray="3 3" stroke="#e4ded3" />
        <XAxis type="number" dataKey="n" domain={[0, maxN]} allowDecimals={false} tick={{ fontSize: 11 }} label={{ value: 'Judged cases (n)', position: 'insideBottom', offset: -8, fontSize: 11 }} />
        <YAxis type="number" dataKey="value" domain={[0, 1]} ticks={[0, 0.2, 0.4, 0.6, 0.8, 1]} tickFormatter={pct} tick={{ fontSize: 11 }} label={{ value: yLabel, angle: -90, position: 'insideLeft', offset: 16, fontSize: 11 }} />
        <Tooltip formatter={(v) => `${(Number(v) * 100).toFixed(1)}%`} labelFormatter={(l) => `${l} judged cases`} />
        <Legend verticalAlign="top" wrapperStyle={{ fontSize: 12 }} />
        <Line data={curve} dataKey="upper95" name="95% limits" type="monotone" dot={false} stroke="#5a51a8" strokeDasharray="6 3" strokeWidth={1.5} isAnimationActive={false} />
        <Line data={curve} dataKey="lower95" name="95% lower" legendType="none" type="monotone" dot={false} stroke="#5a51a8" strokeDasharray="6 3" strokeWidth={1.5} isAnimationActive={false} />
        <Line data={curve} dataKey="upper998" name="99.8% limits" type="monotone" dot={false} stroke="#1d2225" strokeDasharray="2 2" strokeWidth={1.5} isAnimationActive={false} />
        <Line data={curve} dataKey="lower998" name="99.8% lower" legendType="none" type="monotone" dot={false} stroke="#1d2225" strokeDasharray="2 2" strokeWidth={1.5} isAnimationActive={false} />
        {centre !== null && (
          <Line data={centreLine} dataKey="practice" name={`Practice ${(centre * 100).toFixed(1)}%`} type="linear" dot={false} activeDot={false} stroke="#1d2225" strokeWidth={1.5} isAnimationActive={false} />
        )}
        {references.map((r, i) => (
          // the first label under its line, the next above its own, so close rates do not overlap
          <ReferenceLine key={r.label} y={r.rate} stroke="#a0522d" strokeDasharray="10 4 2 4" label={{ value: r.label, position: i % 2 === 0 ? 'insideBottomLeft' : 'insideTopLeft', fontSize: 10, fill: '#7a3f22' }} />
        ))}
        <Scatter data={plain} dataKey="value" name="Clinicians" fill="#6b6b6b" isAnimationActive={false}>
          <LabelList dataKey="label" position="right" style={{ fontSize: 10, fill: '#3d4448' }} />
        </Scatter>
        {marked.length > 0 && (
          <Scatter data={marked} dataKey="value" name={marked[0]!.name} fill="#5a51a8" shape="diamond" legendType="diamond" isAnimationActive={false}>
            <LabelList dataKey="label" position="top" style={{ fontSize: 11, fontWeight: 600, fill: '#1d2225' }} />
          </Scatter>
        )}
      </ComposedChart>
    </ResponsiveContainer>
  );
}
