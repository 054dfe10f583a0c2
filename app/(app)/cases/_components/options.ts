import type { CaseRow, ClinicianView } from '@/lib/services/cases';
import { fmtDate } from '@/components/ui/format';
import type { ReferrerView } from '@/lib/services/referrers';
import { codeLabel } from '@/lib/schemas/case';
import { PAI_LEVELS } from '@/lib/scoring';

/** The choices the case pages and forms offer, built one way wherever they appear. */
export type Option = { value: string; label: string };

export const clinicianOptions = (clinicians: readonly ClinicianView[]): Option[] => clinicians.map((c) => ({ value: c.id, label: c.name ?? c.email }));

export const referrerOptions = (referrers: readonly ReferrerView[]): Option[] =>
  referrers.map((r) => ({ value: r.id, label: r.practiceName ? `${r.name}, ${r.practiceName}` : r.name }));

/** The periapical index, 1–5, each with its description. */
export const PAI_OPTIONS: Option[] = PAI_LEVELS.map((l) => ({ value: String(l.score), label: `${l.score} — ${l.description}` }));

/** An ISO apical file size as written on the instrument (two digits: 08, 10, … 80). */
export const isoSize = (size: number) => String(size).padStart(2, '0');

/** Coded values (sex, recall channel, materials…) with their words from `codeLabel`. */
export const codeOptions = (values: readonly string[]): Option[] => values.map((v) => ({ value: v, label: codeLabel(v) }));

/** A patient's completed cases a new case of the same tooth may follow, newest first (`except`: the case edited). */
export const toothCaseOptions = (rows: readonly CaseRow[], except?: string) =>
  rows
    .filter((r) => r.completionDate && r.id !== except)
    .sort((a, b) => (a.completionDate! < b.completionDate! ? 1 : a.completionDate! > b.completionDate! ? -1 : 0))
    .map((r) => ({ id: r.id, toothFdi: r.toothFdi, label: `${r.kindLabel}, completed ${fmtDate(r.completionDate)}${r.archived ? ' (archived)' : ''}` }));
