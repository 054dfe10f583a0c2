/**
 * The kinds of endodontic case and their names. A module of its own, without zod, so that client
 * lists can show the names without loading the case schemas (First Load JS); lib/schemas/case.ts
 * re-exports them.
 */

export const CASE_KINDS = [
  'primary_treatment',
  'nonsurgical_retreatment',
  'apical_surgery',
  'vital_pulp_therapy',
  'regenerative_endodontics',
] as const;
export type CaseKind = (typeof CASE_KINDS)[number];
export const CASE_KIND_LABELS: Record<CaseKind, string> = {
  primary_treatment: 'Primary root canal treatment',
  nonsurgical_retreatment: 'Non-surgical retreatment',
  apical_surgery: 'Apical surgery',
  vital_pulp_therapy: 'Vital pulp therapy (capping, pulpotomy)',
  regenerative_endodontics: 'Regenerative endodontic procedure',
};
