import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Actor } from '@/lib/auth/actor';
import { FACTORS, levelLabel, type FactorKey } from '@/lib/outcomes';
import { methodsParagraphs } from '@/lib/outcomes/methods';
import { renderOutcomesReport, type ReportData } from '@/lib/pdf/outcomes-report';
import { CASE_KIND_LABELS, type CaseKind } from '@/lib/registry/case-kinds';
import { OutcomeReportQuery } from '@/lib/schemas/outcomes';
import { audit } from './audit';
import { factorTableOfScope, filterDetail, levelNamer, overviewOfScope, scope, type Scope } from './outcomes';
import { memoDocument } from './outcomes-cache';
import { funnelOfScope } from './outcomes-funnel';
import { parseInput } from './parse';
import { knexOf } from './registry-common';

/** A calendar date as the screens show it ("5 Mar 2024"; components/ui/format.ts). */
const fmtDay = (d: string) => new Date(`${d}T12:00:00Z`).toLocaleDateString('en-GB', { day: 'numeric', month: 'short', year: 'numeric', timeZone: 'UTC' });

/**
 * The printable audit report (issue 12, item 8): the overview (and the practice overall for a
 * clinician), the chosen factor's table, the clinician funnel and the methods, dated and naming its
 * filters and the practice. The same figures as the screens, from the same engine calls on one read.
 */
export async function outcomesReportData(em: EntityManager, actor: Actor, raw: unknown, now = new Date()): Promise<ReportData> {
  return (await reportData(em, actor, parseInput(OutcomeReportQuery, raw ?? {}), now)).data;
}

async function reportData(em: EntityManager, actor: Actor, q: OutcomeReportQuery, now: Date): Promise<{ data: ReportData; s: Scope }> {
  const s = await scope(em, actor, q);
  const factor = q.factor as FactorKey;
  const clinicianName = levelNamer(s, 'clinician')!;
  const table = factorTableOfScope(s, factor);
  const practiceRow = (await knexOf(em)('practice').where({ id: actor.practiceId }).first('name')) as { name: string } | undefined;
  const generated = now.toLocaleString('en-GB', { day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', timeZone: s.timeZone });
  const f = s.filter;
  const funnel = funnelOfScope(s, q.measure, q.adjust, actor.userId);
  const { overview, practice } = overviewOfScope(s);
  const data: ReportData = {
    practiceName: practiceRow?.name ?? 'The practice',
    generated,
    preparedBy: actor.name ?? actor.email,
    filters: [
      { label: 'Completed', value: f.from && f.to ? `${fmtDay(f.from)} to ${fmtDay(f.to)}` : f.from ? `from ${fmtDay(f.from)}` : f.to ? `up to ${fmtDay(f.to)}` : 'any date' },
      { label: 'Clinician', value: s.own ? `your own cases (${actor.name ?? actor.email})` : f.clinician ? clinicianName(f.clinician) : 'every clinician' },
      { label: 'Kind of treatment', value: f.kind ? CASE_KIND_LABELS[f.kind as CaseKind] : 'every kind' },
      ...Object.entries(f.levels ?? {}).map(([k, codes]) => {
        const key = k as FactorKey;
        const name = levelNamer(s, key) ?? ((code: string) => levelLabel(key, code));
        return { label: FACTORS[key].label, value: (codes ?? []).map(name).join(' or ') };
      }),
      { label: 'Factor', value: FACTORS[factor].label },
      { label: 'Clinician audit', value: `${funnel.measureLabel}, ${q.adjust === 'adjusted' ? 'risk-adjusted' : 'crude'}` },
      { label: 'Figures as of', value: fmtDay(s.today) },
    ],
    own: s.own,
    overview,
    practice,
    factorLabel: FACTORS[factor].label,
    factorTable: table,
    funnel,
    methods: methodsParagraphs(s.minObs),
  };
  return { data, s };
}

/**
 * The report as PDF bytes; every download is audited with its filters. Drawing takes seconds, so the
 * PDF is kept (outcomes-cache.ts memoDocument) per practice and data version under the normalised
 * filters and everything the report shows (names, who prepared it, today, the figures): a repeat with
 * unchanged data is served from the cache, and its "Prepared" time is the first drawing's (the same
 * day, the same data). The first request after a change of the data draws again.
 */
export async function outcomesReportPdf(em: EntityManager, actor: Actor, raw: unknown): Promise<{ pdf: Buffer; filename: string }> {
  const q = parseInput(OutcomeReportQuery, raw ?? {});
  const { data: d, s } = await reportData(em, actor, q, new Date());
  const { generated: _drawnAt, ...shown } = d;
  const { bytes: pdf, cached } = await memoDocument(actor.practiceId, s.version, ['report', s.filter, q.factor, q.measure, q.adjust, shown], () => renderOutcomesReport(d));
  await audit(em, actor, {
    action: 'outcomes.report_downloaded',
    detail: { ...filterDetail(d.funnel.filter), factor: q.factor, measure: q.measure, adjust: d.funnel.adjustShown, pages: pageCount(pdf), cached },
  });
  return { pdf, filename: `lamina-outcomes-report-${new Date().toISOString().slice(0, 10)}.pdf` };
}

/** The number of pages of a PDF written by react-pdf (its page objects). */
export function pageCount(pdf: Buffer): number {
  return (pdf.toString('latin1').match(/\/Type\s*\/Page\b/g) ?? []).length;
}
