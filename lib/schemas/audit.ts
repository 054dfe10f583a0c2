import { z } from 'zod';
import { Paging } from './paging';
import { blankAsUndefined, calendarDate } from '@/lib/registry/fields';
import { RECORD_KIND_VALUES } from '@/lib/audit/words';

/** The audit trail's filters: who, what, which record, which days (in the practice's time zone). */
export const AuditFilter = z
  .object({
    /** A team member's user id, or "system" for what Lamina did on its own (scans, patients' replies). */
    person: blankAsUndefined(z.union([z.uuid({ error: 'Unknown person.' }), z.literal('system')])),
    /** One action code ("case.read") or a group's prefix ("case."). */
    action: blankAsUndefined(z.string().max(80).regex(/^[a-z_.]+$/, 'Unknown action filter.')),
    record: blankAsUndefined(z.enum(RECORD_KIND_VALUES, { error: 'Unknown kind of record.' })),
    /** The start of a record's id (its short reference, as the trail shows it), or all of it. */
    ref: blankAsUndefined(
      z
        .string()
        .trim()
        .toLowerCase()
        .regex(/^[0-9a-f-]{4,36}$/, 'A record reference is the start of its id: at least 4 of the characters 0-9, a-f and -.'),
    ),
    from: blankAsUndefined(calendarDate('the first day')),
    to: blankAsUndefined(calendarDate('the last day')),
  })
  .refine((f) => !f.from || !f.to || f.from <= f.to, { message: 'The first day comes after the last.', path: ['to'] });
export type AuditFilter = z.infer<typeof AuditFilter>;

export const AuditQuery = z.intersection(Paging, AuditFilter);
export type AuditQuery = z.infer<typeof AuditQuery>;
