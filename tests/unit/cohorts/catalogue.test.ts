/**
 * The variable catalogue (lib/cohorts/catalogue.ts): the data dictionary's fields for every
 * variable, the factors' codes as lib/outcomes FACTORS, the choice of columns.
 */
import { describe, expect, it } from 'vitest';
import { COHORT_VARIABLE_KEYS, COHORT_VARIABLES, codesCell, dictionaryRows, exportColumns } from '@/lib/cohorts/catalogue';
import { FACTORS } from '@/lib/outcomes/compute';

describe('COHORT_VARIABLES', () => {
  it('gives every variable a unique key, a label, a type and a derivation', () => {
    const keys = COHORT_VARIABLES.map((v) => v.key);
    expect(new Set(keys).size).toBe(keys.length);
    for (const v of COHORT_VARIABLES) {
      expect(v.key).toMatch(/^[a-z][a-z0-9_]*$/);
      expect(v.label.length).toBeGreaterThan(2);
      expect(v.derivation.length).toBeGreaterThan(20);
    }
  });
  it('has the endpoints as intervals and as right-censored times, the milestones and the cluster id in every export', () => {
    const always = COHORT_VARIABLES.filter((v) => v.always).map((v) => v.key);
    for (const k of ['case_id', 'patient_id', 'healing_left', 'healing_right', 'healing_time', 'healing_event', 'tooth_loss_left', 'tooth_loss_right', 'tooth_loss_time', 'tooth_loss_event', 'outcome_12m', 'outcome_24m', 'outcome_48m', 'completion_year'])
      expect(always).toContain(k);
  });
  it('offers every factor of the outcomes area but the year (completion_year is always there), with its codes', () => {
    for (const [key, f] of Object.entries(FACTORS)) {
      if (key === 'year') continue;
      const v = COHORT_VARIABLES.find((x) => x.key === (key === 'group' ? 'tooth_group' : key));
      expect(v, key).toBeDefined();
      expect(v!.codes).toEqual('levels' in f ? f.levels : null);
    }
  });
  it('marks the quasi-identifiers of issue 14 (age band, sex, year, tooth group, practice) and the ZIP prefix', () => {
    expect(COHORT_VARIABLES.filter((v) => v.quasiIdentifier).map((v) => v.key).sort()).toEqual(['age_band', 'completion_year', 'postal_prefix', 'practice', 'sex', 'tooth_group']);
  });
  it('has no variable for names, contact details, dates of birth, notes or record numbers', () => {
    for (const v of COHORT_VARIABLES) expect(v.key).not.toMatch(/name|mail|phone|birth|note|registry|address|date/);
  });
});

describe('exportColumns', () => {
  it('keeps the catalogue order and adds only the chosen variables', () => {
    const cols = exportColumns(['sex', 'kind']).map((v) => v.key);
    expect(cols).toContain('sex');
    expect(cols).toContain('kind');
    expect(cols).not.toContain('age_band');
    expect(cols.indexOf('sex')).toBeLessThan(cols.indexOf('kind'));
    expect(COHORT_VARIABLE_KEYS).not.toContain('case_id');
  });
  it('refuses an unknown variable', () => {
    expect(() => exportColumns(['kind', 'surname'])).toThrow(/surname/);
  });
});

describe('dictionary', () => {
  it('writes codes as "code=words; …" and lets the export supply open codes', () => {
    expect(codesCell({ a: 'A', b: 'B' })).toBe('a=A; b=B');
    expect(codesCell(null)).toBe('');
    const rows = dictionaryRows(exportColumns(['clinician']), { clinician: { C01: 'a clinician' } });
    expect(rows.find((r) => r.variable === 'clinician')!.codes).toEqual({ C01: 'a clinician' });
  });
});
