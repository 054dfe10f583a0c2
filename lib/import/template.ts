/**
 * The shape of an import template, as the reading layer (lib/import) sees it: the columns a
 * canonical row has, what kind of value each holds and, for coded columns, the codes allowed.
 *
 * Both imports describe their template this way (the case import in ./case-template.ts, the
 * review import beside its own parser). The reading layer maps a practice's own file onto the
 * template and normalises every cell to the template's canonical form:
 *
 * - date   → YYYY-MM-DD (read under the date order the user chose; Excel serial dates too)
 * - number → decimal point, no thousands separator, no unit ("3,5" → "3.5")
 * - code   → one of `codes[].code` (or, with `multiple`, several joined by "|")
 * - text   → the cell, trimmed
 *
 * A yes/no column is a `code` column with the codes "yes" and "no" (see YES_NO_CODES).
 * Blank cells stay blank: whether a blank is allowed is the template parser's rule, not this
 * layer's.
 */

export type TemplateColumnKind = 'date' | 'number' | 'code' | 'text';

/**
 * What a column's values look like, for proposing a mapping from the values seen when the
 * headers say nothing (a column of FDI tooth numbers, e-mails…).
 */
export type TemplateValueHint = 'email' | 'fdi_tooth' | 'phone' | 'person_name' | 'identifier' | 'postal_code';

export interface TemplateCode {
  /** The canonical code written into the canonical row, e.g. "primary_treatment". */
  code: string;
  /** Words for people, e.g. "Primary treatment". */
  label: string;
  /** Other ways files write it ("RCT", "root canal treatment"); compared normalised. */
  synonyms?: readonly string[];
}

export interface TemplateColumn {
  /** The template's header, also the key of the canonical row, e.g. "tooth_fdi". */
  key: string;
  /** Words for people, e.g. "Tooth (FDI)". */
  label: string;
  kind: TemplateColumnKind;
  /** The template's header must have the column (its cells may still be blank). */
  required?: boolean;
  /** code columns: the codes allowed. */
  codes?: readonly TemplateCode[];
  /** code columns: a cell may hold several codes (separated by | ; or ,), written joined by "|". */
  multiple?: boolean;
  /** Other header names a practice's file may use for this column ("tooth", "FDI"). */
  synonyms?: readonly string[];
  /** What the values look like (for value-based mapping suggestions). */
  hint?: TemplateValueHint;
  /** number columns: the plausible range (for value-based mapping suggestions). */
  min?: number;
  max?: number;
  /** One line of help. */
  description?: string;
}

export interface TemplateDescriptor {
  /** Stable id, the key under which a practice's mapping is saved, e.g. "cases" or "reviews". */
  id: string;
  /** Words for people, e.g. "Past cases". */
  label: string;
  columns: readonly TemplateColumn[];
}

/** The codes of a yes/no column. */
export const YES_NO_CODES: readonly TemplateCode[] = [
  { code: 'yes', label: 'Yes', synonyms: ['y', 'true', '1', 'x', 'ja', 'oui', 'si', 'sí'] },
  { code: 'no', label: 'No', synonyms: ['n', 'false', '0', 'nein', 'non'] },
];

/** A canonical row: template key → the cell in the template's canonical form ('' when blank). */
export type CanonicalRow = Record<string, string>;
