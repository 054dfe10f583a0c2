import { describe, expect, it } from 'vitest';
import { numberPatients, patientNumbers, type OutcomeCase } from '@/lib/outcomes';
import { multivariable } from '@/lib/outcomes/model';
import { outcomeCase, present } from '../../support/outcome-cases';

/**
 * numberPatients / patientNumbers (lib/outcomes/cases.ts): the models cluster by patient through a
 * number kept on each case per `all` array instead of a map keyed by patient id per request. Whatever
 * arrays the same case objects were numbered with before, two cases get the same number exactly when
 * they have the same patient.
 */
const kase = (id: string, patientId: string) => outcomeCase({ id, patientId });
/** Same number ⇔ same patient, for every pair. */
function samePartition(cases: readonly OutcomeCase[], patient: Int32Array) {
  for (let a = 0; a < cases.length; a++) {
    for (let b = 0; b < cases.length; b++) expect(patient[a] === patient[b]).toBe(cases[a]!.patientId === cases[b]!.patientId);
  }
}

describe('patient numbers', () => {
  it('numbers the patients of `all` in order of first appearance; a selection reads them', () => {
    const all = [kase('a', 'p1'), kase('b', 'p2'), kase('c', 'p1'), kase('d', 'p3'), kase('e', 'p2')];
    expect(numberPatients(all)).toBe(3);
    expect(patientNumbers(all, all)).toEqual({ patient: Int32Array.from([0, 1, 0, 2, 1]), count: 3 });
    const selection = [all[4]!, all[3]!, all[1]!];
    expect(patientNumbers(selection, all)).toEqual({ patient: Int32Array.from([1, 2, 1]), count: 3 });
  });

  it('the same case objects numbered with other arrays since (a newer version of the rows, a subset): still right', () => {
    const all = [kase('a', 'p1'), kase('b', 'p2'), kase('c', 'p1'), kase('d', 'p3')];
    numberPatients(all);
    // a newer version of the rows: two objects kept, one new case of p2 first
    const newer = [kase('n', 'p2'), all[2]!, all[1]!, all[0]!];
    expect(patientNumbers(newer, newer).count).toBe(2);
    samePartition(newer, patientNumbers(newer, newer).patient);
    // back to the old array: its cases now carry the newer array's numbers, so it is numbered again
    const again = patientNumbers(all, all);
    expect(again.count).toBe(3);
    samePartition(all, again.patient);
    expect(again.patient).toEqual(Int32Array.from([0, 1, 0, 2]));
  });

  it('cases that are not in `all`, or no `all`: numbered by id', () => {
    const all = [kase('a', 'p1'), kase('b', 'p2')];
    const stranger = kase('x', 'p2');
    const mixed = [all[0]!, stranger, all[1]!];
    const got = patientNumbers(mixed, all);
    samePartition(mixed, got.patient);
    expect(got.count).toBe(2);
    expect(patientNumbers(mixed, null)).toEqual({ patient: Int32Array.from([0, 1, 1]), count: 2 });
  });

  it('the models count patients and cluster by them the same with numbers kept from another array', () => {
    // 30 teeth of 10 patients; the same objects first numbered in a shuffled array
    const cases = Array.from({ length: 30 }, (_, i) =>
      outcomeCase({
        id: `t${i}`,
        patientId: `p${i % 10}`,
        lesionDiameterMm: i % 2 === 0 ? 0 : 6,
        reviews: i % 3 === 0 ? [present(180, 3), present(400, 4)] : [present(180, 3), present(400, 1), present(800, 1)],
      }),
    );
    const fresh = cases.map((c) => ({ ...c }));
    numberPatients([...cases].reverse());
    const choices = [{ key: 'lesion' as const }];
    const got = multivariable(cases, cases, choices, { endpoint: 'healing', minObs: 365 });
    const want = multivariable(fresh, fresh, choices, { endpoint: 'healing', minObs: 365 });
    expect(got.cox.patients).toBe(10);
    expect(got.cox.error).toBeNull();
    expect(got).toEqual(want);
  });
});
