import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  assessReview,
  currentOutcome,
  HEALING_WINDOW_DAYS,
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
  it('disease: lesion unchanged or larger', () => {
    expect(assessReview(review({ baseline: { pai: 4 }, current: { pai: 4 } }))).toMatchObject({ outcome: 'disease', reasons: ['lesion unchanged'] });
    expect(assessReview(review({ baseline: { pai: 3 }, current: { pai: 5 } }))).toMatchObject({ outcome: 'disease', reasons: ['lesion larger'] });
  });
  it('disease: a new lesion where there was none (baseline PAI 2 → 3; PAI 2 → 2 is healed)', () => {
    expect(assessReview(review({ baseline: { pai: 2 }, current: { pai: 3 } }))).toMatchObject({ outcome: 'disease', reasons: ['new lesion'] });
    expect(assessReview(review({ baseline: { pai: 2 }, current: { pai: 2 } })).outcome).toBe('healed');
  });
  it('disease: any sign or symptom, even with no lesion', () => {
    for (const sign of ['sinusTract', 'swelling', 'painOnBiting', 'tenderToPalpation', 'spontaneousPain'] as const) {
      const r = assessReview(review({ current: { pai: 1 }, signs: { [sign]: true } }));
      expect(r.outcome).toBe('disease');
      expect(r.successLenient).toBe(false);
    }
    expect(assessReview(review({ current: { pai: 1 }, signs: { sinusTract: false } })).outcome).toBe('healed');
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
  it('time to failure: first review with disease or a terminal event, else censored at the last review', () => {
    expect(timeToFailure([r(180, 'healing'), r(365, 'disease'), r(730, 'healed')])).toEqual({ time: 365, event: true });
    expect(timeToFailure([r(180, 'healing'), r(900, 'apical-surgery')])).toEqual({ time: 900, event: true });
    expect(timeToFailure([r(180, 'healing'), r(730, 'healed')])).toEqual({ time: 730, event: false });
    expect(timeToFailure([])).toBeNull();
  });
  it('tooth survival: only extraction is an event', () => {
    expect(toothSurvival([r(200, 'disease'), r(400, 'retreated'), r(1200, 'tooth-extracted')])).toEqual({ time: 1200, event: true });
    expect(toothSurvival([r(200, 'disease'), r(400, 'retreated')])).toEqual({ time: 400, event: false });
  });
  it('does not depend on the order the reviews are given in (fast-check)', () => {
    const outcomes: ReviewOutcome[] = ['healed', 'healing', 'disease', 'tooth-extracted', 'retreated', 'apical-surgery'];
    const arb = fc.array(fc.record({ daysSinceTreatment: fc.integer({ min: 0, max: 3000 }), outcome: fc.constantFrom(...outcomes) }), { maxLength: 8 });
    fc.assert(
      fc.property(arb, fc.integer(), (reviews, seed) => {
        const shuffled = [...reviews].sort((a, b) => ((a.daysSinceTreatment * 31 + seed) % 7) - ((b.daysSinceTreatment * 31 + seed) % 7));
        expect(currentOutcome(shuffled)).toBe(currentOutcome(reviews));
        expect(timeToFailure(shuffled)).toEqual(timeToFailure(reviews));
        expect(toothSurvival(shuffled)).toEqual(toothSurvival(reviews));
      }),
    );
  });
});
