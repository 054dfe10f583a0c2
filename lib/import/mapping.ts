/**
 * Column and code mapping: which template column each of the file's columns fills, and which
 * code each coded value of the file means. Pure.
 *
 * `suggestMapping` scores every (file column, template column) pair by name — normalised header
 * (case, accents, punctuation and spacing forgiven) against the template key, label and synonyms:
 * equal, all words shared, or a small spelling distance — and checks the values seen against the
 * column's kind (dates, numbers in range, codes, e-mails, FDI tooth numbers). A column whose name
 * says nothing is proposed by its values only when they fit one template column alone (a column of
 * FDI tooth numbers, say). Each template column is proposed at most once, best score first.
 *
 * `suggestCodes` proposes, for each distinct value of a coded column, the code it means: equal to
 * the code, its label or a synonym once normalised; a unique beginning ("M" → male); a small
 * spelling distance. `codeFor` is what normalising accepts without the user: only the equal kind.
 */
import { parseDate } from './dates';
import type { TemplateCode, TemplateColumn, TemplateDescriptor } from './template';

/** "Date of Birth (DOB)" → "date of birth dob"; "Zahn-Nr." → "zahn nr". */
export function normaliseHeader(text: string): string {
  return text
    .normalize('NFD')
    .replace(/[\u0300-\u036f]/g, '')
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, ' ')
    .trim();
}

/** A value as a code is compared: "Primary treatment" / "primary-treatment" → "primary_treatment". */
export function normaliseCodeValue(text: string): string {
  return normaliseHeader(text).replace(/ /g, '_');
}

/** Levenshtein distance (insertions, deletions, substitutions); also the template header check of lib/registry/csv.ts. */
export function editDistance(a: string, b: string): number {
  const row = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    let prev = row[0]!;
    row[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const tmp = row[j]!;
      row[j] = Math.min(row[j]! + 1, row[j - 1]! + 1, prev + (a[i - 1] === b[j - 1] ? 0 : 1));
      prev = tmp;
    }
  }
  return row[b.length]!;
}

interface Name {
  text: string;
  compact: string;
  words: Set<string>;
}

function nameOf(normalised: string): Name {
  return { text: normalised, compact: normalised.replace(/ /g, ''), words: new Set(normalised.split(' ')) };
}

/** 0–1: how well a normalised header names a normalised candidate. */
function similarity(header: Name, candidate: Name): number {
  if (header.text === '' || candidate.text === '') return 0;
  if (header.text === candidate.text) return 1;
  if (header.compact === candidate.compact) return 0.97;
  let shared = 0;
  for (const w of header.words) if (candidate.words.has(w)) shared++;
  let score = 0;
  if (shared > 0) {
    // All the candidate's words in the header ("Date of birth of patient" ⊇ "date of birth").
    const jaccard = shared / (header.words.size + candidate.words.size - shared);
    score = shared === candidate.words.size ? Math.max(0.75, jaccard) : shared === header.words.size ? Math.max(0.7, jaccard) : jaccard * 0.8;
  }
  const a = header.text;
  const b = candidate.text;
  if (Math.max(a.length, b.length) >= 5 && Math.abs(a.length - b.length) <= 2) {
    const d = editDistance(a, b);
    if (d <= 2) score = Math.max(score, 0.9 - d * 0.05);
  }
  return score;
}

/** The column's key, label and synonyms, normalised once. */
const NAMES = new WeakMap<TemplateColumn, Name[]>();
function namesOf(column: TemplateColumn): Name[] {
  let names = NAMES.get(column);
  if (!names) {
    names = [column.key, column.label, ...(column.synonyms ?? [])].map((n) => nameOf(normaliseHeader(n)));
    NAMES.set(column, names);
  }
  return names;
}

export function nameScore(header: string, column: TemplateColumn): number {
  const h = nameOf(normaliseHeader(header));
  let best = 0;
  for (const n of namesOf(column)) {
    best = Math.max(best, similarity(h, n));
    if (best === 1) break;
  }
  return best;
}

const EMAIL = /^[^@\s]+@[^@\s]+\.[^@\s]+$/;
const FDI = /^([1-4][1-8]|[5-8][1-5])$/;
const PHONE = /^\+?[\d\s()./-]{7,}$/;

function looksLikeNumber(v: string): number | null {
  const t = v.trim().replace(/^[\u2212]/, '-');
  if (/^-?\d+([.,]\d+)?$/.test(t)) return Number(t.replace(',', '.'));
  return null;
}

/** 0–1: the share of non-blank sample values that fit the column (null when there is none). */
export function valueFit(values: readonly string[], column: TemplateColumn): number | null {
  const seen = values.map((v) => v.trim()).filter((v) => v !== '');
  if (seen.length === 0) return null;
  let fit = 0;
  for (const v of seen) {
    if (fits(v, column)) fit++;
  }
  return fit / seen.length;
}

function fits(v: string, column: TemplateColumn): boolean {
  if (column.hint === 'email') return EMAIL.test(v);
  if (column.hint === 'fdi_tooth') return FDI.test(v);
  if (column.hint === 'phone') return PHONE.test(v) && /\d{3}/.test(v);
  switch (column.kind) {
    case 'date': {
      const r = parseDate(v, null);
      return r.ok || Boolean(r.ambiguous);
    }
    case 'number': {
      const n = looksLikeNumber(v);
      if (n === null) return false;
      return (column.min === undefined || n >= column.min) && (column.max === undefined || n <= column.max);
    }
    case 'code':
      return (column.multiple ? v.split(/[|;,]/).map((s) => s.trim()).filter(Boolean) : [v]).every((p) => codeFor(p, column) !== null);
    case 'text':
      return true;
  }
}

/** A hint or kind distinctive enough to propose a column from its values alone. */
function distinctive(column: TemplateColumn): boolean {
  return column.hint === 'fdi_tooth' || column.hint === 'email' || (column.kind === 'code' && (column.codes?.length ?? 0) > 2);
}

export interface ColumnProposal {
  /** The file's column index. */
  index: number;
  header: string;
  /** The template key proposed, or null: leave the column out. */
  target: string | null;
  /** 0–1. */
  score: number;
  /** Why, in words ("same name", "name like “Date of birth”", "values look like FDI tooth numbers"). */
  why: string;
}

/**
 * Proposes a target for each of the file's columns. `sampleRows[i][j]` is the text of column j in
 * sample row i (a few dozen rows are enough).
 */
export function suggestMapping(headers: readonly string[], sampleRows: readonly (readonly string[])[], template: TemplateDescriptor): ColumnProposal[] {
  const samples = headers.map((_, j) => sampleRows.map((r) => r[j] ?? ''));
  const pairs: { index: number; column: TemplateColumn; score: number; name: number; fit: number | null }[] = [];
  headers.forEach((header, index) => {
    if (normaliseHeader(header) === '') return;
    for (const column of template.columns) {
      const name = nameScore(header, column);
      if (name < 0.5) continue;
      const fit = valueFit(samples[index]!, column);
      let score = fit === null ? name : name * 0.8 + fit * 0.2;
      // Values that plainly do not fit a typed column weigh against the name.
      if (fit !== null && fit < 0.3 && column.kind !== 'text') score *= 0.6;
      pairs.push({ index, column, score, name, fit });
    }
  });
  pairs.sort((a, b) => b.score - a.score || a.index - b.index);
  const proposals: ColumnProposal[] = headers.map((header, index) => ({ index, header, target: null, score: 0, why: 'no template column matches its name or values' }));
  const taken = new Set<string>();
  for (const p of pairs) {
    if (p.score < 0.45 || taken.has(p.column.key) || proposals[p.index]!.target !== null) continue;
    taken.add(p.column.key);
    const exact = p.name >= 0.97;
    proposals[p.index] = {
      index: p.index,
      header: headers[p.index]!,
      target: p.column.key,
      score: Math.round(p.score * 100) / 100,
      why: !exact
        ? `name like “${p.column.label}”${p.fit !== null && p.fit >= 0.8 ? ', values fit' : ''}`
        : [p.column.key, p.column.label].some((n) => normaliseHeader(n).replace(/ /g, '') === normaliseHeader(headers[p.index]!).replace(/ /g, ''))
          ? 'same name'
          : `a usual name for “${p.column.label}”`,
    };
  }
  // Columns whose name says nothing: by values alone, when exactly one free template column fits.
  for (const proposal of proposals) {
    if (proposal.target !== null) continue;
    const values = samples[proposal.index]!;
    const fitting = template.columns.filter((c) => !taken.has(c.key) && distinctive(c) && (valueFit(values, c) ?? 0) >= 0.75);
    if (fitting.length !== 1) continue;
    const column = fitting[0]!;
    taken.add(column.key);
    proposal.target = column.key;
    proposal.score = 0.5;
    proposal.why = `values look like ${column.hint === 'fdi_tooth' ? 'FDI tooth numbers' : column.hint === 'email' ? 'e-mail addresses' : `“${column.label}” codes`}`;
  }
  return proposals;
}

/** The code a value means without asking: equal to a code, its label or a synonym, normalised. */
export function codeFor(value: string, column: TemplateColumn): string | null {
  const v = normaliseCodeValue(value);
  if (v === '') return null;
  return codeIndex(column).get(v) ?? null;
}

/** Normalised code, label and synonyms → code, built once per column. */
const CODE_INDEX = new WeakMap<TemplateColumn, Map<string, string>>();
function codeIndex(column: TemplateColumn): Map<string, string> {
  let index = CODE_INDEX.get(column);
  if (!index) {
    index = new Map();
    for (const c of column.codes ?? []) {
      for (const name of [...(c.synonyms ?? []), c.label, c.code]) index.set(normaliseCodeValue(name), c.code);
    }
    CODE_INDEX.set(column, index);
  }
  return index;
}

function nearCode(value: string, codes: readonly TemplateCode[]): string | null {
  const v = normaliseCodeValue(value);
  if (v === '') return null;
  const names = (c: TemplateCode) => [c.code, normaliseCodeValue(c.label), ...(c.synonyms ?? []).map(normaliseCodeValue)];
  // A unique beginning: "M" → male, "prim" → primary_treatment.
  const starting = codes.filter((c) => names(c).some((n) => n.startsWith(v)));
  if (starting.length === 1) return starting[0]!.code;
  if (v.length >= 4) {
    let best: string | null = null;
    let bestD = 3;
    let tie = false;
    for (const c of codes) {
      for (const n of names(c)) {
        const d = editDistance(v, n);
        if (d < bestD) {
          best = c.code;
          bestD = d;
          tie = false;
        } else if (d === bestD && best !== c.code) tie = true;
      }
    }
    if (best && !tie) return best;
  }
  return null;
}

export interface CodeProposal {
  value: string;
  /** The code proposed, null when none is clear. */
  code: string | null;
  /** exact: equal once normalised (accepted without asking); near: a guess to confirm; none. */
  match: 'exact' | 'near' | 'none';
  /** How many times the value appears. */
  count: number;
}

/** Proposes a code for each distinct value (multi-code cells are split), most frequent first. */
export function suggestCodes(values: Iterable<string>, column: TemplateColumn): CodeProposal[] {
  const counts = new Map<string, number>();
  for (const raw of values) {
    const parts = column.multiple ? raw.split(/[|;,]/) : [raw];
    for (const p of parts) {
      const v = p.trim();
      if (v !== '') counts.set(v, (counts.get(v) ?? 0) + 1);
    }
  }
  return [...counts]
    .sort((a, b) => b[1] - a[1] || a[0].localeCompare(b[0]))
    .map(([value, count]) => {
      const exact = codeFor(value, column);
      if (exact) return { value, code: exact, match: 'exact' as const, count };
      const near = nearCode(value, column.codes ?? []);
      return { value, code: near, match: near ? ('near' as const) : ('none' as const), count };
    });
}
