/**
 * A research cohort's selection (issue 14), pure: the outcomes area's filters (period of
 * completion, kind, levels of factors — the same codes as `applyFilter`) with any of several
 * clinicians, and the cohort's counts. Consent is the reader's (SQL); this sees rows already read.
 */
import { healingObservation, type OutcomeCase } from './cases';
import { FACTORS, type FactorKey, type LevelFilters } from './compute';

export interface CohortSelection {
  from?: string;
  to?: string;
  kind?: string;
  /** user ids of the clinicians; any of them */
  clinicians?: readonly string[];
  levels?: LevelFilters;
}

/** The test one case must pass (built once per selection). */
export function cohortPredicate(f: CohortSelection): (c: OutcomeCase) => boolean {
  const levels = Object.entries(f.levels ?? {})
    .filter(([, codes]) => codes && codes.length > 0)
    .map(([k, codes]) => ({ code: FACTORS[k as FactorKey].code, codes: new Set(codes) }));
  const clinicians = f.clinicians && f.clinicians.length ? new Set(f.clinicians) : null;
  return (c) =>
    (!f.from || c.completionDate >= f.from) &&
    (!f.to || c.completionDate <= f.to) &&
    (!f.kind || c.kind === f.kind) &&
    (!clinicians || clinicians.has(c.operatorId)) &&
    levels.every((l) => l.codes.has(l.code(c)));
}

export interface CohortCounts {
  /** cases of consenting patients the filters keep */
  cases: number;
  patients: number;
  /** of those cases, failures on the healing endpoint (disease, retreatment, apical surgery or extraction) */
  events: number;
  /** cases the filters keep whose patient has not agreed to research use (left out) */
  leftOutCases: number;
  leftOutPatients: number;
}

/** The builder's live counts over the practice's rows; `consents(patientId)` is the research-use consent. */
export function cohortCounts(rows: readonly OutcomeCase[], f: CohortSelection, consents: (patientId: string) => boolean, minObservationDays: number): CohortCounts {
  const keep = cohortPredicate(f);
  const patients = new Set<string>();
  const leftOutPatients = new Set<string>();
  let cases = 0;
  let events = 0;
  let leftOutCases = 0;
  for (const c of rows) {
    if (!keep(c)) continue;
    if (!consents(c.patientId)) {
      leftOutCases += 1;
      leftOutPatients.add(c.patientId);
      continue;
    }
    cases += 1;
    patients.add(c.patientId);
    if (healingObservation(c, minObservationDays).right !== null) events += 1;
  }
  return { cases, patients: patients.size, events, leftOutCases, leftOutPatients: leftOutPatients.size };
}
