import { afterAll, describe, expect, it } from 'vitest';
import { addDaysTo, addMonthsClamped, ageOn, daysBetween, isCalendarDate } from '@/lib/registry/calendar-date';

describe('calendar dates', () => {
  it.each([
    ['2024-02-29', true], // leap year (divisible by 4)
    ['2023-02-29', false],
    ['2000-02-29', true], // divisible by 400
    ['1900-02-29', false], // divisible by 100, not 400
    ['2024-04-31', false],
    ['2024-12-31', true],
    ['2024-13-01', false],
    ['2024-00-10', false],
    ['2024-1-05', false],
    ['24-01-05', false],
    ['2024-01-05T00:00:00Z', false],
    ['', false],
  ])('isCalendarDate(%j) = %s', (value, ok) => {
    expect(isCalendarDate(value)).toBe(ok);
  });

  it('refuses non-strings', () => {
    expect(isCalendarDate(new Date())).toBe(false);
    expect(isCalendarDate(20240101)).toBe(false);
  });

  it.each([
    ['2025-08-31', 6, '2026-02-28'], // the example: clamps to the last day of February
    ['2023-08-31', 6, '2024-02-29'], // leap year
    ['2099-08-31', 6, '2100-02-28'], // 2100 is not a leap year
    ['1999-08-31', 6, '2000-02-29'], // 2000 is
    ['2024-02-29', 12, '2025-02-28'],
    ['2024-02-29', 48, '2028-02-29'],
    ['2024-01-31', 1, '2024-02-29'],
    ['2024-03-31', 6, '2024-09-30'],
    ['2024-05-31', 1, '2024-06-30'],
    ['2024-01-15', 6, '2024-07-15'],
    ['2024-10-31', 24, '2026-10-31'],
    ['2024-12-31', 2, '2025-02-28'],
    ['2024-03-31', -1, '2024-02-29'],
  ])('%s + %i months = %s', (from, months, to) => {
    expect(addMonthsClamped(from, months)).toBe(to);
  });

  it.each([
    ['2024-02-28', 1, '2024-02-29'],
    ['2023-02-28', 1, '2023-03-01'],
    ['2024-12-31', 1, '2025-01-01'],
    ['2024-03-01', -1, '2024-02-29'],
    ['2024-01-01', 366, '2025-01-01'],
  ])('%s + %i days = %s', (from, days, to) => {
    expect(addDaysTo(from, days)).toBe(to);
  });

  it('counts days between dates', () => {
    expect(daysBetween('2024-01-01', '2025-01-01')).toBe(366);
    expect(daysBetween('2025-01-01', '2024-01-01')).toBe(-366);
    expect(daysBetween('2024-03-30', '2024-04-01')).toBe(2);
  });

  it('throws on a bad date instead of drifting', () => {
    expect(() => addMonthsClamped('2024-02-30', 1)).toThrow(RangeError);
  });

  it('keeps years before 100 as written', () => {
    expect(addDaysTo('0050-01-01', 1)).toBe('0050-01-02');
  });

  it.each([
    ['1990-06-15', '2024-06-14', 33],
    ['1990-06-15', '2024-06-15', 34],
    ['2000-02-29', '2023-02-28', 22],
    ['2000-02-29', '2023-03-01', 23],
  ])('age of someone born %s on %s is %i', (birth, on, age) => {
    expect(ageOn(birth, on)).toBe(age);
  });
});

describe('no time-zone drift', () => {
  const original = process.env.TZ;
  afterAll(() => {
    if (original === undefined) delete process.env.TZ;
    else process.env.TZ = original;
  });

  // Zones at both ends of the clock and ones whose daylight-saving change happens at midnight.
  it.each(['UTC', 'Pacific/Kiritimati', 'Pacific/Pago_Pago', 'America/Sao_Paulo', 'America/Santiago', 'Asia/Beirut', 'Europe/London'])(
    'gives the same dates in %s',
    (zone) => {
      process.env.TZ = zone;
      expect(addDaysTo('2018-11-03', 1)).toBe('2018-11-04'); // São Paulo skipped midnight that day
      expect(addDaysTo('2024-03-30', 1)).toBe('2024-03-31');
      expect(addDaysTo('2024-10-26', 2)).toBe('2024-10-28');
      expect(addMonthsClamped('2025-08-31', 6)).toBe('2026-02-28');
      expect(daysBetween('2024-03-01', '2024-11-01')).toBe(245);
      let d = '2023-01-01';
      for (let i = 0; i < 800; i++) d = addDaysTo(d, 1);
      expect(d).toBe('2025-03-11');
    },
  );
});
