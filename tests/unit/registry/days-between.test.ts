import { differenceInCalendarDays } from 'date-fns';
import { describe, expect, it } from 'vitest';
import { addDaysTo, daysBetween, toLocalNoon } from '@/lib/registry/calendar-date';

// daysBetween counts calendar days by day numbers (no time-zone work); it must equal date-fns
// differenceInCalendarDays of the local noons (its earlier definition) on every date, leap days and
// daylight-saving changes included.
describe('daysBetween', () => {
  it('equals differenceInCalendarDays of the local noons over 1899–2101, leap days and DST changes', () => {
    let d = '1899-12-25';
    const origin = '2000-02-29';
    while (d < '2101-01-10') {
      expect(daysBetween(origin, d)).toBe(differenceInCalendarDays(toLocalNoon(d), toLocalNoon(origin)));
      d = addDaysTo(d, 13);
    }
    expect(daysBetween('2024-02-28', '2024-03-01')).toBe(2); // leap year
    expect(daysBetween('2023-02-28', '2023-03-01')).toBe(1);
    expect(daysBetween('2026-03-28', '2026-03-30')).toBe(2); // across the European spring change
    expect(daysBetween('2026-10-24', '2026-10-26')).toBe(2);
    expect(daysBetween('0001-01-01', '0001-01-02')).toBe(1); // years below 100 are not 19xx
  });

  it('refuses what is not a calendar date', () => {
    expect(() => daysBetween('2026-02-30', '2026-03-01')).toThrow(RangeError);
    expect(() => daysBetween('2026-1-1', '2026-03-01')).toThrow(RangeError);
  });
});
