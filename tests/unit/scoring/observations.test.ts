import { describe, expect, it } from 'vitest';
import { caseObservations, recordedHistory, type CaseHistory, type ObservedReview } from '@/lib/scoring';

// The endpoints of issue 11 (lib/scoring/README.md, "Case level: observations"). Days since
// completion on 2024-01-01 (2024 is a leap year: 2024-07-01 is day 182, 2025-01-01 day 366).
// Review outcomes follow Friedman & Mor (2004) with the ESE (2006) minimum observation time.
const C = '2024-01-01';
const lesion = (date: string, pai: number, extra: Partial<ObservedReview> = {}): ObservedReview => ({ date, pai, ...extra });
const event = (date: string, terminalEvent: ObservedReview['terminalEvent'], eventDate?: string): ObservedReview => ({ date, terminalEvent, ...(eventDate ? { eventDate } : {}) });
const history = (reviews: ObservedReview[], baselinePai = 4): CaseHistory => ({ completedOn: C, baseline: { pai: baselinePai }, reviews });

describe('caseObservations: healing endpoint (failure: disease, retreatment, surgery, extraction)', () => {
  const cases: [string, ObservedReview[], { left: number; right: number | null }][] = [
    ['no review: censored at completion', [], { left: 0, right: null }],
    ['healed at 12 months: right-censored there', [lesion('2024-07-01', 3), lesion('2025-01-01', 2)], { left: 366, right: null }],
    ['healing at 6 months: censored at 6 months', [lesion('2024-07-01', 3)], { left: 182, right: null }],
    ['unchanged at 6 months is uncertain (not a failure): censored', [lesion('2024-07-01', 4)], { left: 182, right: null }],
    ['unchanged at 6 months, then healed at 12: no failure (issue 11)', [lesion('2024-07-01', 4), lesion('2025-01-01', 2)], { left: 366, right: null }],
    ['unchanged at 6 months, still unchanged at 12: fails between 6 and 12 months', [lesion('2024-07-01', 4), lesion('2025-01-01', 4)], { left: 182, right: 366 }],
    ['first review fails: between completion and it', [lesion('2025-01-01', 5)], { left: 0, right: 366 }],
    ['a sign at 6 months that a later review finds resolved is no failure', [lesion('2024-07-01', 3, { signs: { tenderToPercussion: true } }), lesion('2025-01-01', 2)], { left: 366, right: null }],
    ['a sign at 6 months that persists: fails between completion and 6 months', [lesion('2024-07-01', 3, { signs: { tenderToPercussion: true } }), lesion('2025-01-01', 3, { signs: { sinusTract: true } })], { left: 0, right: 182 }],
    ['disease, healed, disease again: the failure that stands is the second', [lesion('2024-04-01', 5), lesion('2024-07-01', 2), lesion('2025-01-01', 2, { signs: { swelling: true } })], { left: 182, right: 366 }],
    ['retreated, found at a review: between the last clear review and it', [lesion('2024-07-01', 3), event('2025-07-01', 'retreated')], { left: 182, right: 547 }],
    ['retreated elsewhere, with its own date: exact', [lesion('2024-07-01', 3), event('2025-07-01', 'retreated', '2025-03-01')], { left: 425, right: 425 }],
    ['disease, then extracted: the failure began at the disease', [lesion('2024-07-01', 3), lesion('2025-01-01', 4), event('2025-07-01', 'tooth-extracted')], { left: 182, right: 366 }],
    ['disease, then an event dated before that disease review: exact at the event', [lesion('2024-07-01', 3), lesion('2025-01-01', 4), event('2025-07-01', 'apical-surgery', '2024-10-01')], { left: 274, right: 274 }],
    ['reviews after a terminal event do not count for healing', [event('2024-07-01', 'retreated'), lesion('2025-01-01', 1)], { left: 0, right: 182 }],
    ['same-day healed and disease count as disease', [lesion('2024-07-01', 3), lesion('2025-01-01', 2), lesion('2025-01-01', 5)], { left: 182, right: 366 }],
    ['order given does not matter', [lesion('2025-01-01', 4), lesion('2024-07-01', 4)], { left: 182, right: 366 }],
  ];
  it.each(cases)('%s', (_name, reviews, expected) => {
    expect(caseObservations(history(reviews)).healing).toEqual(expected);
  });

  it('uses the practice’s minimum observation time', () => {
    const h = history([lesion('2024-07-01', 4), lesion('2025-01-01', 4)]);
    expect(caseObservations(h, { minObservationDays: 540 }).healing).toEqual({ left: 366, right: null });
    expect(caseObservations(h, { minObservationDays: 100 }).healing).toEqual({ left: 0, right: 182 });
  });
});

describe('caseObservations: tooth-loss endpoint (event: extraction)', () => {
  const cases: [string, ObservedReview[], { left: number; right: number | null }][] = [
    ['no review', [], { left: 0, right: null }],
    ['present at the last review: right-censored there, whatever its outcome', [lesion('2024-07-01', 5), lesion('2025-01-01', 5)], { left: 366, right: null }],
    ['extracted, found at a review: between the last review with the tooth and it', [lesion('2024-07-01', 3), event('2026-01-01', 'tooth-extracted')], { left: 182, right: 731 }],
    ['extracted elsewhere, with its own date: exact', [lesion('2024-07-01', 3), event('2026-01-01', 'tooth-extracted', '2025-07-01')], { left: 547, right: 547 }],
    ['extracted at the first review: from completion', [event('2024-07-01', 'tooth-extracted')], { left: 0, right: 182 }],
    ['retreatment keeps the tooth followed (reviews of the linked case count)', [lesion('2024-07-01', 4), event('2025-01-01', 'retreated'), lesion('2025-07-01', 3), lesion('2026-01-01', 2)], { left: 731, right: null }],
    ['retreated, then extracted later', [event('2025-01-01', 'retreated'), lesion('2025-07-01', 4), event('2026-07-01', 'tooth-extracted')], { left: 547, right: 912 }],
    ['surgery, then censored at the last review', [event('2025-01-01', 'apical-surgery')], { left: 366, right: null }],
    ['present and extracted on the same day: exact that day', [lesion('2025-01-01', 2), event('2025-01-01', 'tooth-extracted')], { left: 366, right: 366 }],
  ];
  it.each(cases)('%s', (_name, reviews, expected) => {
    expect(caseObservations(history(reviews)).toothLoss).toEqual(expected);
  });
});

describe('caseObservations: refuses what cannot be', () => {
  const bad: [string, ObservedReview[], RegExp][] = [
    ['a review before completion', [lesion('2023-12-31', 2)], /before completion/],
    ['a review date that is not a date', [lesion('2024-02-30', 2)], /calendar date/],
    ['an event date after its review', [event('2024-07-01', 'tooth-extracted', '2024-07-02')], /after the review/],
    ['an event date before completion', [event('2024-07-01', 'retreated', '2023-12-01')], /before completion/],
    ['an event date without an event', [lesion('2024-07-01', 2, { eventDate: '2024-06-01' })], /terminal event/],
    ['an extraction dated before a review that saw the tooth', [lesion('2025-01-01', 2), event('2025-07-01', 'tooth-extracted', '2024-07-01')], /before an earlier review/],
    ['a review with neither a score nor an event', [{ date: '2024-07-01' }], /pai or diameterMm/],
    ['an unknown terminal event', [{ date: '2024-07-01', terminalEvent: 'lost' as never }], /terminalEvent/],
  ];
  it.each(bad)('%s', (_name, reviews, message) => {
    expect(() => caseObservations(history(reviews))).toThrow(message);
  });
});

describe('recordedHistory: reviews as Lamina stores them', () => {
  it('maps tooth statuses to terminal events, keeps the event date only with an event, and drops the PAI of an event', () => {
    const h = recordedHistory({ completionDate: C, baselinePai: 4 }, [
      { reviewDate: '2024-07-01', toothStatus: 'present', paiScore: 3, signs: { tenderToPercussion: false } },
      { reviewDate: '2025-07-01', toothStatus: 'extracted', paiScore: null, eventDate: '2025-03-01' },
    ]);
    expect(h.reviews).toEqual([
      { date: '2024-07-01', pai: 3, signs: { tenderToPercussion: false } },
      { date: '2025-07-01', terminalEvent: 'tooth-extracted', eventDate: '2025-03-01' },
    ]);
    expect(caseObservations(h)).toEqual({ healing: { left: 425, right: 425 }, toothLoss: { left: 425, right: 425 } });
  });
});
