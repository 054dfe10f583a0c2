import { describe, expect, it } from 'vitest';
import type { OutcomeCase } from '@/lib/outcomes';
import { rowOrder, swapRows } from '@/lib/outcomes/swap';

/** The incremental refresh's merge (lib/outcomes/swap.ts): the result must equal a full read's rows, in its order (common practice: completion date, then id). */
const row = (id: string, patientId: string, completionDate: string, extra: Partial<OutcomeCase> = {}): OutcomeCase => ({
  id,
  patientId,
  operatorId: 'op',
  kind: 'primary_treatment',
  completionDate,
  baselinePai: 1,
  lesionDiameterMm: 0,
  fillLengthClass: 'within',
  toothGroup: 'molar',
  toothArch: 'upper',
  previousCaseId: null,
  openVisit: false,
  reviews: [],
  ...extra,
});

describe('swapRows', () => {
  const a = row('0a', 'p1', '2020-01-01');
  const b = row('0b', 'p2', '2020-01-01');
  const c = row('0c', 'p1', '2021-05-05');
  const d = row('0d', 'p3', '2022-02-02');
  const rows = [a, b, c, d];

  it('replaces a changed case in place and keeps the other objects', () => {
    const b2 = row('0b', 'p2', '2020-01-01', { openVisit: true });
    const out = swapRows(rows, [b2], ['0b'], []);
    expect(out).toEqual([a, b2, c, d]);
    expect(out[1]).toBe(b2);
    expect(out[0]).toBe(a);
    expect(rows[1]).toBe(b); // the old array is not changed
  });

  it('moves a case whose completion date changed to its place in the order', () => {
    const a2 = row('0a', 'p1', '2021-06-01');
    expect(swapRows(rows, [a2], ['0a'], []).map((r) => r.id)).toEqual(['0b', '0c', '0a', '0d']);
  });

  it('drops changed cases that are not read again (archived, deleted, no longer completed)', () => {
    expect(swapRows(rows, [], ['0c', '0d'], []).map((r) => r.id)).toEqual(['0a', '0b']);
  });

  it("drops every case of a changed patient and takes the patient's cases as read again", () => {
    const e = row('0e', 'p1', '2019-12-31');
    expect(swapRows(rows, [c, e], [], ['p1']).map((r) => r.id)).toEqual(['0e', '0b', '0c', '0d']);
    expect(swapRows(rows, [], [], ['p1']).map((r) => r.id)).toEqual(['0b', '0d']);
  });

  it('adds new cases, ties on the date broken by id', () => {
    const n = row('00', 'p9', '2020-01-01');
    const m = row('0f', 'p9', '2030-01-01');
    expect(swapRows(rows, [m, n], ['00', '0f'], []).map((r) => r.id)).toEqual(['00', '0a', '0b', '0c', '0d', '0f']);
  });

  it('orders as the full read: by date, then by id', () => {
    expect([d, c, b, a].sort(rowOrder)).toEqual(rows);
  });
});
