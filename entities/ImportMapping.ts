import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/** What a practice chose for one file layout (lib/import): proposed again for the next file. */
export interface ImportMappingChoices {
  /** File header (as written) → template key, or null when left out. */
  columns: Record<string, string | null>;
  dateOrder: 'dmy' | 'mdy' | 'ymd' | null;
  decimalMark: '.' | ',';
  /** Template key → file value → code. */
  codes: Record<string, Record<string, string>>;
  /** The sheet read, for a workbook. */
  sheet: string | null;
}

/**
 * A practice's column mapping for an import template, keyed by the file's header signature (a
 * hash of its normalised headers, lib/import/signature.ts): one row per practice, template and
 * layout, updated each time the practice checks or imports a file of that layout.
 */
export const ImportMappingSchema = defineEntity({
  name: 'ImportMapping',
  tableName: 'import_mapping',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    template: p.string().length(40),
    signature: p.string().length(64),
    headers: p.json<string[]>(),
    choices: p.json<ImportMappingChoices>(),
    updatedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    createdAt: p.datetime().onCreate(() => new Date()),
    updatedAt: p.datetime().onCreate(() => new Date()),
  },
  uniques: [{ name: 'import_mapping_practice_template_signature_unique', properties: ['practice', 'template', 'signature'] }],
});

export type ImportMapping = InferEntity<typeof ImportMappingSchema>;
