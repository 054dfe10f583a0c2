/**
 * Swapping re-read cases into the outcomes area's cached rows (lib/services/outcomes-cache.ts,
 * incremental refresh). Pure: no database.
 */
import type { OutcomeCase } from './cases';

/** The order of the full read (lib/services/outcomes.ts): completion date, then id (PostgreSQL orders uuids as their lower-case text). */
export const rowOrder = (a: OutcomeCase, b: OutcomeCase): number =>
  a.completionDate < b.completionDate ? -1 : a.completionDate > b.completionDate ? 1 : a.id < b.id ? -1 : a.id > b.id ? 1 : 0;

/**
 * A new array of rows: `rows` (in the full read's order) without the changed cases and the cases
 * of changed patients, with `fresh` (their current rows, read again; changed cases that are gone
 * or no longer count are simply absent) merged in, in the full read's order. The old array and its
 * objects are left as they are; unchanged objects are kept (with what lib/outcomes memoised on them).
 */
export function swapRows(rows: readonly OutcomeCase[], fresh: readonly OutcomeCase[], caseIds: readonly string[], patientIds: readonly string[]): OutcomeCase[] {
  const cases = new Set(caseIds);
  const patients = new Set(patientIds);
  const incoming = [...fresh].sort(rowOrder);
  const out: OutcomeCase[] = [];
  let j = 0;
  for (const r of rows) {
    if (cases.has(r.id) || patients.has(r.patientId)) continue;
    while (j < incoming.length && rowOrder(incoming[j]!, r) < 0) out.push(incoming[j++]!);
    out.push(r);
  }
  while (j < incoming.length) out.push(incoming[j++]!);
  return out;
}
