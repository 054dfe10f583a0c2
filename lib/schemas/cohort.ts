import { z } from 'zod';
import { CASE_KINDS, type CaseKind } from '@/lib/registry/case-kinds';
import { blankAsUndefined, calendarDate, text } from '@/lib/registry/fields';
import type { LevelFilters } from '@/lib/outcomes/compute';
import { LevelFilterQuery, LEVEL_PREFIX } from './outcomes';

/**
 * The research cohorts' schemas (issue 14). A cohort's filters are the outcomes area's (period of
 * completion, kind, levels of factors; lib/schemas/outcomes.ts parses the levels) with clinicians
 * as the cohort's codes (C1, C2…: lib/services/cohorts.ts maps them to the practice's clinicians;
 * a saved version keeps the user ids, so a later code change cannot change what it selects).
 * The referrer is no filter of a researcher's (its levels are referrer ids).
 */

/** Factors a cohort may filter on by level: not the clinician (codes, below) nor the referrer. */
export const COHORT_NO_LEVEL_FILTER = ['clinician', 'referrer'] as const;
export const CLINICIAN_CODE = /^C[1-9][0-9]{0,3}$/;
export const K_MIN = 2;
export const K_MAX = 50;
export const K_DEFAULT = 5;
export const MAX_VARIABLES = 200;

/** What a saved version keeps (clinicians as user ids). */
export interface CohortFilters {
  from?: string;
  to?: string;
  kind?: CaseKind;
  clinicians?: string[];
  levels: LevelFilters;
}

/**
 * The builder's filters in their URL form (also the `filters` object of a saved version's body):
 * `from`, `to`, `kind`, `clinicians=C1,C3` and `f.<factor>=<code>,…`. Clinicians stay codes here.
 */
const BaseQuery = z
  .object({
    from: blankAsUndefined(calendarDate('the first day of the period')),
    to: blankAsUndefined(calendarDate('the last day of the period')),
    kind: blankAsUndefined(z.enum(CASE_KINDS, { error: 'Unknown kind of treatment.' })),
    clinicians: blankAsUndefined(
      z
        .string({ error: 'List clinician codes separated by commas.' })
        .max(400, 'At most 400 characters of clinician codes.')
        .transform((s, ctx) => {
          const codes = [...new Set(s.split(',').map((c) => c.trim()).filter(Boolean))];
          const bad = codes.find((c) => !CLINICIAN_CODE.test(c));
          if (bad !== undefined) ctx.addIssue({ code: 'custom', message: `“${bad.slice(0, 20)}” is no clinician code (C1, C2…).` });
          return codes;
        }),
    ),
  })
  .refine((f) => !f.from || !f.to || f.from <= f.to, { message: 'The first day comes after the last.', path: ['to'] });

export const CohortFilterQuery = z
  .record(z.string(), z.unknown())
  .superRefine((raw, ctx) => {
    for (const f of COHORT_NO_LEVEL_FILTER) {
      if (`${LEVEL_PREFIX}${f}` in raw) ctx.addIssue({ code: 'custom', path: [`${LEVEL_PREFIX}${f}`], message: f === 'clinician' ? 'Choose clinicians by their codes.' : 'A cohort is not filtered by referrer.' });
    }
  })
  .pipe(z.intersection(BaseQuery, LevelFilterQuery));
export type CohortFilterQuery = z.output<typeof CohortFilterQuery>;

/** The builder's filters as a flat string record (what the page keeps and sends). */
export const FilterRecord = z.record(z.string().max(60), z.string().max(2_000)).refine((r) => Object.keys(r).length <= 40, 'Too many filters.');

export const CreateCohortBody = z.strictObject({
  name: text({ max: 120, required: 'Name the cohort.', tooLong: 'At most 120 characters in the name.' }),
});

export const SaveVersionBody = z.strictObject({
  filters: FilterRecord.default({}),
  variables: z
    .array(z.string().regex(/^[a-z][a-z0-9_]{0,59}$/, 'A variable is named in lower case, digits and _.'), { error: 'Choose the variables as a list.' })
    .max(MAX_VARIABLES)
    .transform((v) => [...new Set(v)]),
  k: z.number({ error: 'k is a whole number.' }).int('k is a whole number.').min(K_MIN, `k is at least ${K_MIN}.`).max(K_MAX, `k is at most ${K_MAX}.`).default(K_DEFAULT),
});

export const StartExportBody = z.strictObject({
  version: z.number({ error: 'Choose a saved version.' }).int().min(1).max(100_000),
});

export const CohortId = z.uuid({ error: 'No such cohort.' });

export const DownloadQuery = z.object({ token: z.string().min(10).max(400) });
