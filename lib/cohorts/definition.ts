/**
 * A saved cohort version's definition (filters, the variables chosen, k) in one canonical form, so
 * that saving the builder unchanged does not add a version that says the same as the last one.
 * Variables are a set (the archive's columns follow the catalogue's order, lib/cohorts/catalogue.ts);
 * filter lists are sets too; object keys and undefined entries do not matter.
 */
export interface CohortDefinition {
  filters: unknown;
  variables: readonly string[];
  k: number;
}

function canonical(value: unknown): unknown {
  if (Array.isArray(value)) {
    const items = value.map(canonical);
    return items.every((v) => typeof v !== 'object' || v === null) ? [...new Set(items.map((v) => JSON.stringify(v)))].sort().map((s) => JSON.parse(s) as unknown) : items;
  }
  if (value && typeof value === 'object') {
    return Object.fromEntries(
      Object.entries(value as Record<string, unknown>)
        .map(([k, v]) => [k, canonical(v)] as const)
        .filter(([, v]) => v !== undefined && !(Array.isArray(v) && v.length === 0) && !(v && typeof v === 'object' && !Array.isArray(v) && Object.keys(v).length === 0))
        .sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)),
    );
  }
  return value;
}

export function definitionKey(d: CohortDefinition): string {
  return JSON.stringify({ filters: canonical(d.filters) ?? {}, variables: [...new Set(d.variables)].sort(), k: d.k });
}

export function sameDefinition(a: CohortDefinition, b: CohortDefinition): boolean {
  return definitionKey(a) === definitionKey(b);
}
