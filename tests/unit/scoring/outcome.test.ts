import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  assessReview,
  currentOutcome,
  DEFAULT_MIN_OBSERVATION_DAYS,
  HEALING_WINDOW_DAYS,
  isFailure,
  timeToFailure,
  toothSurvival,
  type ReviewFindings,
  type ReviewOutcome,
} from '@/lib/scoring';

// Categories of Friedman & Mor (2004, J Calif Dent Assoc 32:493–503):
// healed = clinically normal and no lesion; healing = clinically normal and a
// reduced lesion within the observation window; disease = a new, unchanged or
// larger lesion, or signs or symptoms. Strict/lenient success: Ng et al. (2007, Int Endod J 40:921–939).
const review = (over: Partial<ReviewFindings>): ReviewFindings => ({
  daysSinceTreatment: 365,
  baseline: { pai: 4 },
  current: { pai: 2 },
  ...over,
});

describe('outcome of one review (Friedman & Mor 2004)', () => {
  it('healed: clinically normal, PAI 2 (no lesion) — the 2|3 boundary', () => {
    expect(assessReview(review({ current: { pai: 2 } }))).toMatchObject({ outcome: 'healed', successStrict: true, successLenient: true });
    expect(assessReview(review({ current: { pai: 1 } })).outcome).toBe('healed');
    expect(assessReview(review({ current: { pai: 3 } })).outcome).toBe('healing'); // 3 < baseline 4: still a lesion, smaller
  });
  it('healing: lesion smaller than at baseline, clinically normal, within four years', () => {
    const r = assessReview(review({ baseline: { pai: 5 }, current: { pai: 4 } }));
    expect(r).toMatchObject({ outcome: 'healing', successStrict: false, successLenient: true });
  });
  it('disease: lesion unchanged at or after the minimum observation time, or larger at any time', () => {
    expect(assessReview(review({ baseline: { pai: 4 }, current: { pai: 4 } }))).toMatchObject({ outcome: 'disease', reasons: ['lesion unchanged'] });
    expect(assessReview(review({ baseline: { pai: 3 }, current: { pai: 5 } }))).toMatchObject({ outcome: 'disease', reasons: ['lesion larger'] });
    expect(assessReview(review({ daysSinceTreatment: 90, baseline: { pai: 3 }, current: { pai: 5 } })).outcome).toBe('disease');
  });
  // ESE (2006) quality guidelines: judge at one year; a lesion unchanged or smaller may be followed
  // up to four years. Lamina: an unchanged lesion before the practice's minimum observation time
  // (default 365 days) is "uncertain" — neither success nor failure.
  it('uncertain: lesion unchanged before the minimum observation time (default 365: day 364 vs 365)', () => {
    expect(DEFAULT_MIN_OBSERVATION_DAYS).toBe(365);
    const early = assessReview(review({ daysSinceTreatment: 364, baseline: { pai: 4 }, current: { pai: 4 } }));
    expect(early).toMatchObject({ outcome: 'uncertain', successStrict: false, successLenient: false });
    expect(early.reasons[1]).toMatch(/unchanged before the minimum observation time \(365 days\)/);
    expect(assessReview(review({ daysSinceTreatment: 365, baseline: { pai: 4 }, current: { pai: 4 } })).outcome).toBe('disease');
    // the practice's own setting
    expect(assessReview(review({ daysSinceTreatment: 400, baseline: { pai: 4 }, current: { pai: 4 }, minObservationDays: 540 })).outcome).toBe('uncertain');
    expect(assessReview(review({ daysSinceTreatment: 540, baseline: { pai: 4 }, current: { pai: 4 }, minObservationDays: 540 })).outcome).toBe('disease');
    expect(assessReview(review({ daysSinceTreatment: 0, baseline: { pai: 4 }, current: { pai: 4 }, minObservationDays: 0 })).outcome).toBe('disease');
    // a sign makes it disease at any time; a smaller lesion early is healing; no lesion is healed
    expect(assessReview(review({ daysSinceTreatment: 180, baseline: { pai: 4 }, current: { pai: 4 }, signs: { tenderToPercussion: true } }))).toMatchObject({
      outcome: 'disease',
      reasons: ['tender to percussion'],
    });
    expect(assessReview(review({ daysSinceTreatment: 180, baseline: { pai: 4 }, current: { pai: 3 } })).outcome).toBe('healing');
    expect(assessReview(review({ daysSinceTreatment: 180, baseline: { pai: 2 }, current: { pai: 2 } })).outcome).toBe('healed');
    // a new lesion is disease at any time
    expect(assessReview(review({ daysSinceTreatment: 30, baseline: { pai: 2 }, current: { pai: 3 } })).outcome).toBe('disease');
    // CBCT diameters: unchanged 4.0 mm at 6 months is uncertain
    expect(assessReview({ daysSinceTreatment: 182, baseline: { diameterMm: 4 }, current: { diameterMm: 4 } }).outcome).toBe('uncertain');
  });
  it('refuses a minimum observation time that is not whole days from 0 to 1461', () => {
    for (const bad of [-1, 1.5, 1462, Number.NaN]) expect(() => assessReview(review({ minObservationDays: bad }))).toThrow(/minObservationDays/);
  });
  it('disease: a new lesion where there was none (baseline PAI 2 → 3; PAI 2 → 2 is healed)', () => {
    expect(assessReview(review({ baseline: { pai: 2 }, current: { pai: 3 } }))).toMatchObject({ outcome: 'disease', reasons: ['new lesion'] });
    expect(assessReview(review({ baseline: { pai: 2 }, current: { pai: 2 } })).outcome).toBe('healed');
  });
  // Friedman & Mor (2004) count tenderness to percussion and to palpation as signs of disease.
  it('disease: any sign or symptom, tenderness to percussion included, even with no lesion', () => {
    for (const sign of ['sinusTract', 'swelling', 'painOnBiting', 'tenderToPercussion', 'tenderToPalpation', 'spontaneousPain'] as const) {
      const r = assessReview(review({ current: { pai: 1 }, signs: { [sign]: true } }));
      expect(r.outcome).toBe('disease');
      expect(r.successLenient).toBe(false);
    }
    expect(assessReview(review({ current: { pai: 1 }, signs: { tenderToPercussion: true } })).reasons).toEqual(['tender to percussion']);
    expect(assessReview(review({ current: { pai: 1 }, signs: { sinusTract: false } })).outcome).toBe('healed');
  });
  it('increased mobility is recorded but not scored (not one of Friedman & Mor’s signs)', () => {
    expect(assessReview(review({ current: { pai: 1 }, signs: { mobility: true } })).outcome).toBe('healed');
  });
  it('a lesion still only healing after four years is disease (common practice, ESE 2006 guidelines): day 1461 vs 1462', () => {
    expect(HEALING_WINDOW_DAYS).toBe(1461);
    expect(assessReview(review({ daysSinceTreatment: 1461, baseline: { pai: 5 }, current: { pai: 3 } })).outcome).toBe('healing');
    const late = assessReview(review({ daysSinceTreatment: 1462, baseline: { pai: 5 }, current: { pai: 3 } }));
    expect(late.outcome).toBe('disease');
    expect(late.reasons).toEqual(['lesion smaller but still present after four years']);
    // healed is healed at any time
    expect(assessReview(review({ daysSinceTreatment: 4000, current: { pai: 2 } })).outcome).toBe('healed');
  });
  it('terminal events are the outcome and are never success', () => {
    for (const ev of ['tooth-extracted', 'retreated', 'apical-surgery'] as const) {
      const r = assessReview({ daysSinceTreatment: 700, baseline: { pai: 4 }, terminalEvent: ev });
      expect(r).toMatchObject({ outcome: ev, successStrict: false, successLenient: false });
    }
  });
  it('works on lesion diameters (CBCT): no lesion at 0.5 mm, lesion at 0.51 mm (Lamina CBCT-PAI rule)', () => {
    const d = (base: number, now: number, days = 365) =>
      assessReview({ daysSinceTreatment: days, baseline: { diameterMm: base }, current: { diameterMm: now } }).outcome;
    expect(d(6, 0.5)).toBe('healed');
    expect(d(6, 0.51)).toBe('healing');
    expect(d(6, 6)).toBe('disease');
    expect(d(6, 6.01)).toBe('disease');
    expect(d(6, 5.99)).toBe('healing');
    expect(d(0.5, 0.51)).toBe('disease'); // new lesion
    expect(d(0, 0)).toBe('healed');
    expect(d(6, 3, 1462)).toBe('disease');
  });
  it('rejects mixed scales, a missing current lesion, bad days', () => {
    expect(() => assessReview({ daysSinceTreatment: 10, baseline: { pai: 4 }, current: { diameterMm: 2 } })).toThrow(/same scale/);
    expect(() => assessReview({ daysSinceTreatment: 10, baseline: { pai: 4 } })).toThrow(/current/);
    expect(() => assessReview(review({ daysSinceTreatment: -1 }))).toThrow(/days/);
    expect(() => assessReview(review({ current: { pai: 7 } }))).toThrow(/periapical index/);
  });
});

describe('case-level outcome, time to failure, tooth survival', () => {
  const r = (daysSinceTreatment: number, outcome: ReviewOutcome) => ({ daysSinceTreatment, outcome });
  it('current outcome is that of the latest review', () => {
    expect(currentOutcome([r(180, 'healing'), r(730, 'healed')])).toBe('healed');
    expect(currentOutcome([r(730, 'disease'), r(180, 'healing')])).toBe('disease');
    expect(currentOutcome([])).toBeNull();
  });
  it('a terminal event ends the case', () => {
    expect(currentOutcome([r(180, 'disease'), r(400, 'retreated'), r(900, 'healed')])).toBe('retreated');
  });
  it('the current outcome may be uncertain; on one day uncertain sorts between healing and disease', () => {
    expect(currentOutcome([r(180, 'uncertain')])).toBe('uncertain');
    expect(currentOutcome([r(180, 'uncertain'), r(180, 'healing')])).toBe('uncertain');
    expect(currentOutcome([r(180, 'uncertain'), r(180, 'disease')])).toBe('disease');
  });
  // Issue 11: timeToFailure took the first disease while currentOutcome took the latest review, so
  // an unchanged lesion at 6 months and healed at 12 counted as a failure at 6 months. The failure
  // is now the one that stands, dated at the first review of its unbroken run.
  it('time to failure agrees with the current outcome: a disease a later review finds resolved is no failure', () => {
    expect(timeToFailure([r(180, 'healing'), r(365, 'disease'), r(730, 'healed')])).toEqual({ time: 730, event: false });
    expect(timeToFailure([r(180, 'disease'), r(365, 'healed'), r(730, 'disease'), r(1100, 'disease')])).toEqual({ time: 730, event: true });
    expect(timeToFailure([r(180, 'disease'), r(400, 'disease'), r(500, 'retreated')])).toEqual({ time: 180, event: true });
    expect(timeToFailure([r(180, 'disease'), r(300, 'uncertain')])).toEqual({ time: 300, event: false });
    expect(timeToFailure([r(180, 'healing'), r(900, 'apical-surgery')])).toEqual({ time: 900, event: true });
    expect(timeToFailure([r(180, 'healing'), r(730, 'healed')])).toEqual({ time: 730, event: false });
    expect(timeToFailure([r(180, 'healed'), r(180, 'disease')])).toEqual({ time: 180, event: true });
    expect(timeToFailure([])).toBeNull();
  });
  it('tooth survival: only extraction is an event', () => {
    expect(toothSurvival([r(200, 'disease'), r(400, 'retreated'), r(1200, 'tooth-extracted')])).toEqual({ time: 1200, event: true });
    expect(toothSurvival([r(200, 'disease'), r(400, 'retreated')])).toEqual({ time: 400, event: false });
  });
  it('does not depend on the order the reviews are given in (fast-check)', () => {
    const outcomes: ReviewOutcome[] = ['healed', 'healing', 'uncertain', 'disease', 'tooth-extracted', 'retreated', 'apical-surgery'];
    const arb = fc.array(fc.record({ daysSinceTreatment: fc.integer({ min: 0, max: 3000 }), outcome: fc.constantFrom(...outcomes) }), { maxLength: 8 });
    fc.assert(
      fc.property(arb, fc.integer(), (reviews, seed) => {
        const shuffled = [...reviews].sort((a, b) => ((a.daysSinceTreatment * 31 + seed) % 7) - ((b.daysSinceTreatment * 31 + seed) % 7));
        expect(currentOutcome(shuffled)).toBe(currentOutcome(reviews));
        expect(timeToFailure(shuffled)).toEqual(timeToFailure(reviews));
        expect(toothSurvival(shuffled)).toEqual(toothSurvival(reviews));
        // a failure exactly when the current outcome is one
        const current = currentOutcome(reviews);
        expect(timeToFailure(reviews)?.event ?? false).toBe(current !== null && isFailure(current));
      }),
    );
  });
});
