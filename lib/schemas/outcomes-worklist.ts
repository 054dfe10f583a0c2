import { z } from 'zod';
import { blankAsUndefined, calendarDate, oneOf, text } from '@/lib/registry/fields';
import { APICAL_DIAGNOSES } from '@/lib/schemas/case';
import { NEXT_STEPS } from '@/lib/outcomes/worklist';

/**
 * A next step recorded for a case on the non-healing worklist (lib/outcomes/worklist.ts). The
 * date is the re-review date (watch) or the planned date; the service checks it against the case
 * and today. A retreatment or surgery becomes a new case of the tooth: the clinician names its
 * apical diagnosis (Lamina does not diagnose; the PAI and lesion come from the findings as entered).
 */
export const DecisionInput = z
  .object({
    step: oneOf(NEXT_STEPS, 'the next step'),
    date: calendarDate('the date'),
    note: blankAsUndefined(text({ max: 300, tooLong: 'At most 300 characters in the note.' })),
    apicalDiagnosis: blankAsUndefined(oneOf(APICAL_DIAGNOSES, 'the apical diagnosis')),
  })
  .superRefine((d, ctx) => {
    if ((d.step === 'retreat' || d.step === 'surgery') && !d.apicalDiagnosis) {
      ctx.addIssue({ code: 'custom', path: ['apicalDiagnosis'], message: 'Choose the apical diagnosis: it starts the new case of the tooth.' });
    }
  });
export type DecisionInput = z.output<typeof DecisionInput>;

