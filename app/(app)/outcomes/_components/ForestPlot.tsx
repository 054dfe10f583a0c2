'use client';
import { CartesianGrid, ErrorBar, ReferenceLine, ResponsiveContainer, Scatter, ScatterChart, Tooltip, XAxis, YAxis } from 'recharts';

export interface ForestRow {
  /** "Factor: level" as the table says it */
  name: string;
  ratio: number;
  lower: number;
  upper: number;
}

const TICKS = [0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1, 2, 5, 10, 20, 50, 100];

/**
 * A forest plot: one row per model term, the ratio as a square and its 95% interval as a line, on a
 * log scale with the line of no difference at 1. Intervals beyond the axis are cut at its edge.
 */
export function ForestPlot({ rows, ratioLabel }: { rows: ForestRow[]; ratioLabel: string }) {
  const lo = Math.max(0.01, Math.min(0.5, ...rows.map((r) => r.lower)));
  const hi = Math.min(100, Math.max(2, ...rows.map((r) => r.upper)));
  const ticks = TICKS.filter((t) => t >= lo && t <= hi);
  const domain: [number, number] = [Math.min(lo, ticks[0] ?? lo), Math.max(hi, ticks[ticks.length - 1] ?? hi)];
  const clamp = (v: number) => Math.min(domain[1], Math.max(domain[0], v));
  const data = rows.map((r, i) => {
    const x = clamp(r.ratio);
    return { y: rows.length - i, x, err: [x - clamp(r.lower), clamp(r.upper) - x], name: r.name, ratio: r.ratio, lower: r.lower, upper: r.upper };
  });
  const names = new Map(data.map((d) => [d.y, d.name]));
  return (
    <ResponsiveContainer width="100%" height="100%">
      <ScatterChart margin={{ top: 8, right: 16, bottom: 16, left: 8 }}>
        <CartesianGrid strokeDasharray="3 3" stroke="#e4ded3" />
        <XAxis
          type="number"
          dataKey="x"
          scale="log"
          domain={domain}
          ticks={ticks}
          allowDataOverflow
          tick={{ fontSize: 11 }}
          tickFormatter={(v: number) => String(v)}
          label={{ value: `${ratioLabel}, log scale`, position: 'insideBottom', offset: -8, fontSize: 11 }}
        />
        <YAxis type="number" dataKey="y" domain={[0.5, rows.length + 0.5]} ticks={data.map((d) => d.y)} tickFormatter={(v: number) => names.get(v) ?? ''} width={190} tick={{ fontSize: 11 }} interval={0} />
        <ReferenceLine x={1} stroke="#1d2225" strokeDasharray="4 3" />
        <Tooltip
          cursor={false}
          content={({ payload }) => {
            const p = payload?.[0]?.payload as (typeof data)[number] | undefined;
            if (!p) return null;
            return (
              <div className="rounded border border-bone-300 bg-white px-2 py-1 text-xs shadow">
                <strong>{p.name}</strong>
                <br />
                {ratioLabel} {p.ratio.toFixed(2)} ({p.lower.toFixed(2)}–{p.upper.toFixed(2)})
              </div>
            );
          }}
        />
        <Scatter data={data} fill="#5a51a8" shape="square" isAnimationActive={false}>
          <ErrorBar dataKey="err" direction="x" width={6} stroke="#5a51a8" strokeWidth={2} isAnimationActive={false} />
        </Scatter>
      </ScatterChart>
    </ResponsiveContainer>
  );
}
