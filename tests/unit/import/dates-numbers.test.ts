import { describe, expect, it } from 'vitest';
import { excelSerialToIso, parseDate, suggestDateOrder } from '@/lib/import/dates';
import { parseNumber, suggestDecimalMark } from '@/lib/import/numbers';

describe('Excel serial dates', () => {
  // The 1900 system: serial 1 = 1900-01-01 and the fictitious 1900-02-29 is serial 60
  // (Microsoft's documentation of the 1900 and 1904 date systems; 43831 = 2020-01-01 from memory,
  // checked by counting days from 1899-12-30).
  it.each([
    [1, '1900-01-01'],
    [59, '1900-02-28'],
    [61, '1900-03-01'],
    [43831, '2020-01-01'],
    [45000.75, '2023-03-15'],
  ])('1900 system: %s → %s', (serial, iso) => {
    expect(excelSerialToIso(serial)).toEqual({ ok: true, iso });
  });

  it('refuses serial 60, the 29 February 1900 that never was', () => {
    const r = excelSerialToIso(60);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toMatch(/29 February 1900/);
  });

  it('refuses serials before the first day', () => {
    expect(excelSerialToIso(0).ok).toBe(false);
    expect(excelSerialToIso(-1, true).ok).toBe(false);
  });

  // The 1904 system counts 0 = 1904-01-01; the two systems differ by 1462 days.
  it.each([
    [0, '1904-01-01'],
    [1, '1904-01-02'],
    [43831 - 1462, '2020-01-01'],
  ])('1904 system: %s → %s', (serial, iso) => {
    expect(excelSerialToIso(serial, true)).toEqual({ ok: true, iso });
  });

  it('reads a five-digit text value as a serial date', () => {
    expect(parseDate('43831', 'dmy')).toEqual({ ok: true, iso: '2020-01-01' });
    expect(parseDate('42369', null, { date1904: true })).toEqual({ ok: true, iso: '2020-01-01' });
  });
});

describe('suggestDateOrder', () => {
  it('day-month-year from a first part above 12', () => {
    const s = suggestDateOrder(['03/04/2021', '25/03/2020', '', '07.11.2019']);
    expect(s.order).toBe('dmy');
    expect(s.reason).toContain('25/03/2020');
    expect(s.evidence.dmy).toBe(1);
  });
  it('month-day-year from a middle part above 12', () => {
    expect(suggestDateOrder(['03/25/2020', '04/01/2021']).order).toBe('mdy');
  });
  it('year-month-day when every date starts with a year', () => {
    expect(suggestDateOrder(['2020-03-04', '2021/12/01']).order).toBe('ymd');
  });
  it('no suggestion when day and month are all 12 or less', () => {
    const s = suggestDateOrder(['03/04/2020', '05/06/2021', '12/12/2019']);
    expect(s.order).toBeNull();
    expect(s.reason).toMatch(/cannot tell/);
  });
  it('no suggestion when the values contradict each other', () => {
    const s = suggestDateOrder(['25/03/2020', '03/25/2020']);
    expect(s.order).toBeNull();
    expect(s.reason).toMatch(/contradict/);
  });
  it('no suggestion without dates', () => {
    expect(suggestDateOrder(['', 'abc']).order).toBeNull();
  });
});

describe('parseDate', () => {
  it.each([
    ['03/04/2020', 'dmy', '2020-04-03'],
    ['03/04/2020', 'mdy', '2020-03-04'],
    ['3.4.2020', 'dmy', '2020-04-03'],
    ['2020-03-04', 'dmy', '2020-03-04'],
    ['2020-03-04', 'mdy', '2020-03-04'],
    ['29/02/2020', 'dmy', '2020-02-29'],
    ['03/04/2020 00:00', 'dmy', '2020-04-03'],
    ['2020-03-04T10:15:00Z', 'ymd', '2020-03-04'],
    ['3 Mar 2020', 'mdy', '2020-03-03'],
    ['March 3, 2020', 'dmy', '2020-03-03'],
    ['25/03/2020', null, '2020-03-25'],
    ['03/25/2020', null, '2020-03-25'],
    ['04/04/2020', null, '2020-04-04'],
  ] as const)('%s under %s → %s', (text, order, iso) => {
    expect(parseDate(text, order)).toEqual({ ok: true, iso });
  });

  it.each([
    ['31/02/2020', 'dmy', /February 2020 has no day 31/],
    ['29/02/2021', 'dmy', /has no day 29/],
    ['12/25/2020', 'dmy', /no month 25 — is the file month-day-year/],
    ['25/12/2020', 'mdy', /no month 25 — is the file day-month-year/],
    ['2020-13-01', 'ymd', /no month 13/],
    ['hello', 'dmy', /not a date/],
  ] as const)('refuses %s under %s as impossible', (text, order, reason) => {
    const r = parseDate(text, order);
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.reason).toMatch(reason);
      expect(r.ambiguous).toBeFalsy();
    }
  });

  it.each([
    ['03/04/2020', null],
    ['03/04/20', 'dmy'],
    ['20/03/04', 'ymd'],
  ] as const)('refuses %s under %s as ambiguous', (text, order) => {
    const r = parseDate(text, order);
    expect(r).toMatchObject({ ok: false, ambiguous: true });
  });
});

describe('numbers', () => {
  it.each([
    ['3,5', ',', 3.5],
    ['1.234,5', ',', 1234.5],
    ['1 234,5', ',', 1234.5],
    ['-0,5', ',', -0.5],
    ['\u22120,5', ',', -0.5],
    ['3.5', '.', 3.5],
    ['1,234.5', '.', 1234.5],
    ['12', ',', 12],
  ] as const)('%s with decimal %s → %s', (text, mark, value) => {
    expect(parseNumber(text, mark)).toMatchObject({ ok: true, value });
  });

  it('writes the canonical form with a decimal point', () => {
    expect(parseNumber('20,50', ',')).toMatchObject({ ok: true, text: '20.5' });
  });

  it.each([
    ['3,5', '.', /decimal comma/],
    ['3.5', ',', /decimal point/],
    ['3 mm', '.', /without the unit/],
    ['abc', '.', /not a number/],
  ] as const)('refuses %s with decimal %s', (text, mark, reason) => {
    const r = parseNumber(text, mark);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toMatch(reason);
  });

  it('suggests the decimal mark from the values', () => {
    expect(suggestDecimalMark(['3,5', '2', '']).mark).toBe(',');
    expect(suggestDecimalMark(['3.5', '2']).mark).toBe('.');
    expect(suggestDecimalMark(['1,234']).mark).toBeNull();
    expect(suggestDecimalMark(['3,5', '3.5']).mark).toBeNull();
  });
});
