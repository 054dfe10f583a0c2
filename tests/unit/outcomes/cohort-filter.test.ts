import { describe, expect, it } from 'vitest';
import { applyFilter, type OutcomeCase } from '@/lib/outcomes';
import { cohortCounts, cohortPredicate } from '@/lib/outcomes/cohort-filter';
import { outcomeCase } from '../../support/outcome-cases';

let seq = 0;
const kase = (change: Partial<OutcomeCase> = {}) => {
  seq += 1;
  return outcomeCase({ id: `c${seq}`, patientId: `p${seq}`, ...change });
};

describe('a research cohort’s selection (issue 14)', () => {
  const rows = [
    kase({ toothGroup: 'molar', operatorId: 'u1', completionDate: '2022-03-01' }),
    kase({ toothGroup: 'molar', operatorId: 'u2', completionDate: '2023-03-01' }),
    kase({ toothGroup: 'incisor', operatorId: 'u1', completionDate: '2023-05-01', patientId: 'p1' }),
    kase({ toothGroup: 'premolar', operatorId: 'u3', completionDate: '2024-01-01' }),
  ];

  it('keeps what the outcomes area’s applyFilter keeps for one clinician, and any of several', () => {
    const f = { from: '2022-01-01', to: '2023-12-31', levels: { group: ['molar', 'incisor'] } };
    expect(rows.filter(cohortPredicate({ ...f, clinicians: ['u1'] }))).toEqual(applyFilter(rows, { ...f, clinician: 'u1' }));
    expect(rows.filter(cohortPredicate({ ...f, clinicians: ['u1', 'u2'] })).map((c) => c.id)).toEqual([rows[0]!.id, rows[1]!.id, rows[2]!.id]);
    expect(rows.filter(cohortPredicate({}))).toHaveLength(4);
  });

  it('counts consenting cases and patients, and the cases left out for want of consent', () => {
    const consents = (id: string) => id !== rows[1]!.patientId;
    const c = cohortCounts(rows, { levels: { group: ['molar', 'incisor'] } }, consents, 365);
    // rows 0 and 2 are two teeth of one patient
    expect(c).toMatchObject({ cases: 2, patients: 1, leftOutCases: 1, leftOutPatients: 1 });
    expect(c.events).toBe(0); // no review found a failure
  });
});
