import { describe, expect, it } from 'vitest';
import { sameDefinition } from '@/lib/cohorts/definition';

const base = { filters: { from: '2020-01-01', kind: 'retreatment', clinicians: ['u2', 'u1'], levels: { tooth_group: ['molar'], arch: ['upper', 'lower'] } }, variables: ['age_band', 'sex'], k: 5 };

describe('a cohort definition, compared for "nothing changed since the last version"', () => {
  it('is the same whatever the order of keys, list items or variables, and with empty or missing parts', () => {
    expect(sameDefinition(base, { k: 5, variables: ['sex', 'age_band', 'sex'], filters: { levels: { arch: ['lower', 'upper'], tooth_group: ['molar'] }, clinicians: ['u1', 'u2'], kind: 'retreatment', from: '2020-01-01', to: undefined } })).toBe(true);
    expect(sameDefinition({ filters: { levels: {} }, variables: [], k: 5 }, { filters: {}, variables: [], k: 5 })).toBe(true);
    expect(sameDefinition({ filters: { clinicians: [], levels: { sealer: [] } }, variables: [], k: 5 }, { filters: { levels: {} }, variables: [], k: 5 })).toBe(true);
  });
  it('differs on any filter value, level, variable or k', () => {
    expect(sameDefinition(base, { ...base, k: 6 })).toBe(false);
    expect(sameDefinition(base, { ...base, variables: ['age_band'] })).toBe(false);
    expect(sameDefinition(base, { ...base, filters: { ...base.filters, from: '2020-01-02' } })).toBe(false);
    expect(sameDefinition(base, { ...base, filters: { ...base.filters, levels: { tooth_group: ['molar', 'premolar'], arch: ['upper', 'lower'] } } })).toBe(false);
    expect(sameDefinition(base, { ...base, filters: { ...base.filters, clinicians: ['u1'] } })).toBe(false);
  });
});
