import 'server-only';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { Circle, Document, Font, Line, Page, Polygon, Polyline, StyleSheet, Svg, Text, View, renderToBuffer } from '@react-pdf/renderer';
import { COMPLETENESS_WARNING, type FactorTable, type Overview, type Rate } from '@/lib/outcomes';
import { BAND_WORDS, FUNNEL_CAUTION, TERM_LABELS, type Limits } from '@/lib/outcomes/funnel';
import { tableRows, type FunnelPoint, type FunnelReport } from '@/lib/services/outcomes-funnel';
import { woffToSfnt } from './woff';

/**
 * The printable audit report (issue 12, item 8), drawn with @react-pdf/renderer in the route
 * handler (Node runtime; Next keeps the package external). The font ships in the app
 * (app/fonts/pdf: Inter 400 and 700, static WOFF from @fontsource/inter, OFL; the variable WOFF2
 * the pages use cannot be subset by the PDF writer). The font covers Latin: `pdfText` spells out
 * the few symbols it lacks. The WOFF files are unpacked once into plain TrueType (`woffToSfnt`):
 * the PDF writer would otherwise inflate the glyph table again for every glyph of every document.
 */
const FONT_DIR = path.join(process.cwd(), 'app', 'fonts', 'pdf');
let registered = false;
/** A font file of FONT_DIR as a data URL of the plain TrueType font it holds. */
const unpackedFont = (file: string) => `data:font/ttf;base64,${woffToSfnt(readFileSync(path.join(FONT_DIR, file))).toString('base64')}`;
/** Registers the PDF font once (also used by lib/pdf/outcome-letter.tsx). */
export function registerFont() {
  if (registered) return;
  Font.register({
    family: 'Inter',
    fonts: [
      { src: unpackedFont('inter-latin-400-normal.woff'), fontWeight: 400 },
      { src: unpackedFont('inter-latin-700-normal.woff'), fontWeight: 700 },
    ],
  });
  // Words are not broken with hyphens (names, figures).
  Font.registerHyphenationCallback((word) => [word]);
  registered = true;
}

/** Shaped texts kept per font (see cachedShaping); more than this and the font's cache starts again. */
const MAX_SHAPED = 20_000;
type Shaper = { layout: (text: string, ...rest: unknown[]) => unknown; __laminaShaped?: true };

/**
 * The PDF writer shapes every run of text with the font's OpenType rules (fontkit `layout`: about a third
 * of drawing a report), and a report repeats most of its words in every drawing (headings, labels, the
 * methods). Once the fonts are loaded, each font's `layout` is wrapped to keep its result per text and
 * options: the same glyphs and positions, which react-pdf copies before changing (textkit scalePositions).
 */
async function cachedShaping(): Promise<void> {
  for (const fontWeight of [400, 700]) {
    await Font.load({ fontFamily: 'Inter', fontWeight });
    const font = Font.getFont({ fontFamily: 'Inter', fontWeight })?.data as Shaper | null | undefined;
    if (!font || font.__laminaShaped) continue;
    const layout = font.layout.bind(font);
    const kept = new Map<string, unknown>();
    font.layout = (text: string, ...rest: unknown[]) => {
      const key = `${JSON.stringify(rest)}\u0000${text}`;
      let run = kept.get(key);
      if (run === undefined) {
        if (kept.size >= MAX_SHAPED) kept.clear();
        kept.set(key, (run = layout(text, ...rest)));
      }
      return run;
    };
    font.__laminaShaped = true;
  }
}

/** Symbols outside the font's Latin set, spelled out. */
export function pdfText(s: string): string {
  return s
    .replace(/χ²/g, 'chi-square')
    .replace(/≥/g, '>=')
    .replace(/≤/g, '<=')
    .replace(/[◆▲▼]/g, '')
    .replace(/[^\u0000-\u00ff\u0131\u0152\u0153\u2000-\u206f\u20ac\u2122\u2212]/g, '?');
}

export interface ReportData {
  practiceName: string;
  /** "2 Dec 2026, 10:30" in the practice's time zone */
  generated: string;
  preparedBy: string;
  filters: { label: string; value: string }[];
  own: boolean;
  overview: Overview;
  practice: Overview | null;
  factorLabel: string;
  factorTable: FactorTable;
  funnel: FunnelReport;
  methods: string[];
}

const INK = '#1d2225';
const MUTED = '#5b6166';
const DURA = '#5a51a8';
const RULE = '#ddd4c6';

const s = StyleSheet.create({
  page: { fontFamily: 'Inter', fontSize: 9, color: INK, paddingTop: 40, paddingBottom: 56, paddingHorizontal: 40, lineHeight: 1.35 },
  h1: { fontSize: 18, fontWeight: 700, marginBottom: 4, lineHeight: 1.2 },
  h2: { fontSize: 12, fontWeight: 700, marginTop: 14, marginBottom: 6 },
  muted: { color: MUTED },
  caution: { fontSize: 8, color: MUTED, marginTop: 6, borderLeftWidth: 2, borderLeftColor: DURA, paddingLeft: 6 },
  warning: { marginTop: 6, padding: 6, borderWidth: 1, borderColor: '#a0522d', color: '#7a3f22' },
  table: { borderTopWidth: 1, borderTopColor: RULE },
  row: { flexDirection: 'row', borderBottomWidth: 1, borderBottomColor: RULE, paddingVertical: 3 },
  head: { fontWeight: 700 },
  cell: { paddingRight: 6 },
  // placed from the top: with a line height on the page, a `bottom`-placed footer whose text is drawn per page (`render`) is dropped by react-pdf 4.9
  footer: { position: 'absolute', top: 806, left: 40, right: 40, fontSize: 7, color: MUTED, flexDirection: 'row', justifyContent: 'space-between' },
});

const pct = (x: number | null | undefined, digits = 0) => (x === null || x === undefined ? '-' : `${(100 * x).toFixed(digits)}%`);
const rateText = (r: Rate) => (r.n === 0 ? 'no cases' : `${pct(r.estimate)} (${pct(r.lower)}-${pct(r.upper)}; ${r.x} of ${r.n})${r.few ? ' few cases' : ''}`);

function Table({ widths, head, rows }: { widths: number[]; head: string[]; rows: string[][] }) {
  return (
    <View style={s.table}>
      <View style={[s.row, s.head]} fixed>
        {head.map((h, i) => (
          <Text key={i} style={[s.cell, { width: `${widths[i]}%` }]}>
            {pdfText(h)}
          </Text>
        ))}
      </View>
      {rows.map((r, j) => (
        <View key={j} style={s.row} wrap={false}>
          {r.map((c, i) => (
            <Text key={i} style={[s.cell, { width: `${widths[i]}%` }]}>
              {pdfText(c)}
            </Text>
          ))}
        </View>
      ))}
    </View>
  );
}

function OverviewTable({ o, title }: { o: Overview; title: string }) {
  const at = (a: number | 'latest') => (a === 'latest' ? 'latest review >= 12 months' : `${a} months`);
  const rows: string[][] = [
    ['Cases followed', String(o.cases), `${o.reviewed} with a review`],
    ['Lost to follow-up', rateText(o.lost), ''],
    ...o.completeness.map((c) => [`Follow-up completeness, ${c.months} months`, rateText(c.rate), 'seen of due']),
    ...o.success.flatMap((f) => [
      [`Strict success (healed), ${at(f.at)}`, rateText(f.strict), `best ${pct(f.strictBounds.best)} / worst ${pct(f.strictBounds.worst)}; ${f.missing} not seen, ${f.uncertain} uncertain`],
      [`Lenient success (healed or healing), ${at(f.at)}`, rateText(f.lenient), `best ${pct(f.lenientBounds.best)} / worst ${pct(f.lenientBounds.worst)}`],
    ]),
    ...o.survival.map((v) => [`Tooth survival, ${v.years} year${v.years === 1 ? '' : 's'} (Kaplan-Meier)`, o.teeth === 0 ? '- (no teeth)' : `${pct(v.km.survival, 1)} (${pct(v.km.lower, 1)}-${pct(v.km.upper, 1)})`, `${v.km.nRisk} still followed`]),
  ];
  return (
    <View>
      <Text style={{ fontWeight: 700, marginBottom: 3 }}>{pdfText(title)}</Text>
      {o.warning && (
        <Text style={s.warning}>{`Follow-up completeness is below ${Math.round(COMPLETENESS_WARNING * 100)}%: these results describe the reviewed cases, not the practice.`}</Text>
      )}
      <Table widths={[38, 30, 32]} head={['Figure', 'Value (95% interval; n)', 'Detail']} rows={rows} />
    </View>
  );
}

/** The funnel plot with react-pdf's Svg primitives, from the same figures as the screen. */
function FunnelSvg({ f, numbers }: { f: FunnelReport; numbers: Map<string, number> }) {
  const W = 515;
  const H = 250;
  const L = 34;
  const R = 12;
  const T = 8;
  const B = 26;
  const adjusted = f.adjustShown === 'adjusted';
  const valueOf = (p: FunnelPoint) => (adjusted ? p.adjusted : p.crude.estimate);
  const maxN = Math.max(10, ...f.curve.map((c) => c.n), ...f.points.map((p) => p.n));
  const x = (n: number) => L + (n / maxN) * (W - L - R);
  const y = (v: number) => T + (1 - Math.max(0, Math.min(1, v))) * (H - T - B);
  const line = (pick: (l: Limits) => number) => f.curve.map((l) => `${x(l.n).toFixed(1)},${y(pick(l)).toFixed(1)}`).join(' ');
  const xTicks = [0, 0.25, 0.5, 0.75, 1].map((k) => Math.round(k * maxN));
  return (
    <Svg width={W} height={H} viewBox={`0 0 ${W} ${H}`}>
      <Line x1={L} y1={T} x2={L} y2={H - B} stroke={INK} strokeWidth={0.8} />
      <Line x1={L} y1={H - B} x2={W - R} y2={H - B} stroke={INK} strokeWidth={0.8} />
      {[0, 0.2, 0.4, 0.6, 0.8, 1].map((v) => (
        <Line key={`g${v}`} x1={L} y1={y(v)} x2={W - R} y2={y(v)} stroke={RULE} strokeWidth={0.5} />
      ))}
      {[0, 0.2, 0.4, 0.6, 0.8, 1].map((v) => (
        <Text key={`y${v}`} x={L - 4} y={y(v) + 3} style={{ fontSize: 7 }} textAnchor="end" fill={MUTED}>
          {`${Math.round(v * 100)}%`}
        </Text>
      ))}
      {xTicks.map((n) => (
        <Text key={`x${n}`} x={x(n)} y={H - B + 10} style={{ fontSize: 7 }} textAnchor="middle" fill={MUTED}>
          {String(n)}
        </Text>
      ))}
      <Text x={(L + W - R) / 2} y={H - 4} style={{ fontSize: 7 }} textAnchor="middle" fill={MUTED}>
        Judged cases (n)
      </Text>
      {f.curve.length > 0 && (
        <>
          <Polyline points={line((l) => l.upper95)} stroke={DURA} strokeWidth={1} strokeDasharray="5 3" fill="none" />
          <Polyline points={line((l) => l.lower95)} stroke={DURA} strokeWidth={1} strokeDasharray="5 3" fill="none" />
          <Polyline points={line((l) => l.upper998)} stroke={INK} strokeWidth={1} strokeDasharray="1.5 1.5" fill="none" />
          <Polyline points={line((l) => l.lower998)} stroke={INK} strokeWidth={1} strokeDasharray="1.5 1.5" fill="none" />
        </>
      )}
      {f.practice.estimate !== null && <Line x1={L} y1={y(f.practice.estimate)} x2={W - R} y2={y(f.practice.estimate)} stroke={INK} strokeWidth={1.2} />}
      {f.literature.map((l) => (
        <Line key={l.label} x1={L} y1={y(l.rate)} x2={W - R} y2={y(l.rate)} stroke="#a0522d" strokeWidth={0.8} strokeDasharray="8 3 2 3" />
      ))}
      {f.literature.map((l, i) => (
        // the first label under its line, the next above its own: close rates do not overlap
        <Text key={`t${l.label}`} x={L + 4} y={i % 2 === 0 ? y(l.rate) + 7.5 : y(l.rate) - 2.5} style={{ fontSize: 6.5 }} fill="#7a3f22">
          {pdfText(l.label)}
        </Text>
      ))}
      {f.points.map((p) => {
        const v = valueOf(p);
        if (v === null) return null;
        const cx = x(p.n);
        const cy = y(v);
        return p.highlighted ? (
          <Polygon key={p.key} points={`${cx},${cy - 5} ${cx + 5},${cy} ${cx},${cy + 5} ${cx - 5},${cy}`} fill={DURA} stroke={INK} strokeWidth={0.6} />
        ) : (
          <Circle key={p.key} cx={cx} cy={cy} r={2.6} fill="#6b6b6b" />
        );
      })}
      {f.points.map((p) => {
        const v = valueOf(p);
        const label = p.own ? 'You' : numbers.get(p.key);
        if (v === null || label === undefined) return null;
        return (
          <Text key={`l${p.key}`} x={x(p.n) + 6} y={y(v) + 2.5} style={{ fontSize: 7, fontWeight: p.highlighted ? 700 : 400 }} fill={INK}>
            {String(label)}
          </Text>
        );
      })}
    </Svg>
  );
}

export function OutcomesReportDocument({ d }: { d: ReportData }) {
  const f = d.funnel;
  const adjusted = f.adjustShown === 'adjusted';
  const rows = tableRows(f);
  const numbers = new Map(f.own ? [] : f.points.map((p, i) => [p.key, i + 1] as const));
  const test = d.factorTable.test;
  return (
    <Document title={`Outcomes audit report, ${d.practiceName}`} author="Lamina" subject="Outcomes audit" creator="Lamina" producer="Lamina">
      <Page size="A4" style={s.page}>
        <View style={s.footer} fixed>
          <Text>{pdfText(`Lamina outcomes audit · ${d.practiceName} · ${d.generated}`)}</Text>
          <Text render={({ pageNumber, totalPages }) => `Page ${pageNumber} of ${totalPages}`} />
        </View>
        <Text style={s.h1}>Outcomes audit report</Text>
        <Text style={{ fontSize: 11 }}>{pdfText(d.practiceName)}</Text>
        <Text style={s.muted}>{pdfText(`Prepared ${d.generated} by ${d.preparedBy}`)}</Text>
        <View style={{ marginTop: 6 }}>
          <Text style={{ fontWeight: 700 }}>Filters</Text>
          {d.filters.map((x) => (
            <Text key={x.label}>{pdfText(`${x.label}: ${x.value}`)}</Text>
          ))}
        </View>
        <Text style={s.caution}>{pdfText(FUNNEL_CAUTION)}</Text>

        <Text style={s.h2}>1. Overview</Text>
        <OverviewTable o={d.overview} title={d.own ? 'Your cases' : 'The cases chosen'} />
        {d.practice && (
          <View style={{ marginTop: 8 }}>
            <OverviewTable o={d.practice} title="The practice overall (same period and kind)" />
          </View>
        )}

        <View break>
          <Text style={s.h2}>{pdfText(`2. Success by ${d.factorLabel.toLowerCase()}`)}</Text>
          <Text style={[s.muted, { marginBottom: 4 }]}>Outcome at the latest review a year or more after completion; Wilson 95% intervals.</Text>
          <Table
            widths={[30, 10, 25, 25, 10]}
            head={[d.factorLabel, 'Cases', 'Strict (healed)', 'Lenient (healed or healing)', 'Uncertain']}
            rows={
              d.factorTable.levels.length
                ? d.factorTable.levels.map((l) => [l.level, String(l.cases), rateText(l.strict), rateText(l.lenient), String(l.uncertain)])
                : [['No completed cases in this filter.', '', '', '', '']]
            }
          />
          <Text style={{ marginTop: 4 }}>
            {pdfText(
              test === null
                ? 'No test: fewer than two levels with judged cases, or every judged case had the same result.'
                : `${test.method === 'fisher' ? "Fisher's exact test" : `Pearson's chi-square test (chi-square = ${test.chiSquare!.toFixed(2)}, ${test.df} df)`}: p ${test.pValue < 0.001 ? '< 0.001' : `= ${test.pValue.toFixed(3)}`}${test.sparse ? '; some expected counts are below 5, read it with care' : ''}.`,
            )}
          </Text>
        </View>

        <View break>
          <Text style={s.h2}>{pdfText(`3. Clinician audit: ${f.measureLabel}, ${adjusted ? 'risk-adjusted' : 'crude'}`)}</Text>
          {f.modelNote && f.adjust === 'adjusted' && <Text style={s.muted}>{pdfText(`${f.modelNote} The crude rates are shown.`)}</Text>}
          {f.curve.length === 0 ? (
            <Text>No funnel: no spread of results to draw limits around (no judged case, or every judged case had the same result).</Text>
          ) : (
            <FunnelSvg f={f} numbers={numbers} />
          )}
          <Text style={[s.muted, { fontSize: 7.5, marginBottom: 4 }]}>
            {pdfText(
              `Solid line: the practice (${pct(f.practice.estimate, 1)}, ${f.practice.x} of ${f.practice.n}). Dashed: 95% limits; dotted: 99.8% limits. ${f.literature.length ? 'Dash-dot: published pooled strict success. ' : ''}${f.own ? 'Your point is the diamond; the other points are other clinicians, unnamed.' : 'Numbers match the table; the diamond is the clinician chosen in the filters.'}`,
            )}
          </Text>
          <Table
            widths={[6, 24, 24, 16, 12, 18]}
            head={['#', 'Clinician', 'Crude (95% interval; n)', 'O / E', 'Risk-adjusted', 'Against the limits']}
            rows={[
              ...rows.map((p) => [
                f.own ? '' : String(numbers.get(p.key) ?? ''),
                `${p.label} (${p.cases} cases)`,
                rateText(p.crude),
                p.oe === null ? '-' : `${p.observed} / ${p.expected!.toFixed(1)} = ${p.oe.toFixed(2)}`,
                pct(p.adjusted, 1),
                (adjusted ? p.adjustedBand : p.crudeBand) ? BAND_WORDS[(adjusted ? p.adjustedBand : p.crudeBand)!] : '-',
              ]),
              ['', `The practice (${f.cases} cases)`, rateText(f.practice), '-', '-', 'centre line'],
            ]}
          />
          {f.model && (
            <Text style={{ marginTop: 4 }}>
              {pdfText(`Case-mix model (logistic, ${f.model.n} judged cases, ${f.model.events} successes): ${f.model.names.slice(1).join('; ')}.${f.model.left.length ? ` Left out: ${f.model.left.map((l) => TERM_LABELS[l.term]).join(', ')}.` : ''}`)}
            </Text>
          )}
          {f.literature.map((l) => (
            <Text key={l.label} style={[s.muted, { fontSize: 7.5 }]}>
              {pdfText(`Reference: ${l.source}`)}
            </Text>
          ))}
          <Text style={s.caution}>{pdfText(FUNNEL_CAUTION)}</Text>
        </View>

        <View>
          <Text style={s.h2}>4. Methods</Text>
          {d.methods.map((m, i) => (
            <Text key={i} style={{ marginBottom: 5 }}>
              {pdfText(m)}
            </Text>
          ))}
          <Text style={s.caution}>Lamina supports clinical judgement and does not diagnose. Figures come from the findings as entered; small groups vary by chance.</Text>
        </View>
      </Page>
    </Document>
  );
}

export async function renderOutcomesReport(d: ReportData): Promise<Buffer> {
  registerFont();
  await cachedShaping();
  return renderToBuffer(<OutcomesReportDocument d={d} />);
}
