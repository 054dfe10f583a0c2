import { describe, expect, it } from 'vitest';
import {
  cbctPai,
  cbctPaiScore,
  checkPai,
  fillLengthClass,
  isApicalPeriodontitis,
  PAI_LEVELS,
  paiLevel,
  SCORING_CAUTION,
} from '@/lib/scoring';

describe('periapical index (Ørstavik, Kerekes & Eriksen 1986, Endod Dent Traumatol 2:20–34)', () => {
  it('has the five scores of the published scale, each with a description', () => {
    expect(PAI_LEVELS.map((l) => l.score)).toEqual([1, 2, 3, 4, 5]);
    for (const l of PAI_LEVELS) expect(l.description.length).toBeGreaterThan(10);
  });
  it('reads 1–2 as healthy and 3–5 as apical periodontitis, both sides of the 2|3 cut-off (Trope, Delano & Ørstavik 1999, J Endod 25:345–350)', () => {
    expect(isApicalPeriodontitis(1)).toBe(false);
    expect(isApicalPeriodontitis(2)).toBe(false);
    expect(isApicalPeriodontitis(3)).toBe(true);
    expect(isApicalPeriodontitis(4)).toBe(true);
    expect(isApicalPeriodontitis(5)).toBe(true);
    expect(paiLevel(3).apicalPeriodontitis).toBe(true);
  });
  it('rejects values outside the scale (0, 6, 2.5, NaN)', () => {
    for (const bad of [0, 6, 2.5, Number.NaN, '3']) expect(() => checkPai(bad)).toThrow(/periapical index/);
  });
});

describe('CBCT periapical index (Estrela et al. 2008, J Endod 34:1325–1331)', () => {
  // Published ranges: 0 intact bone; 1 up to 1 mm; 2 >1–2 mm; 3 >2–4 mm; 4 >4–8 mm; 5 >8 mm.
  // Lamina's boundary rule: each upper limit belongs to the lower score; 0.5 mm or less is score 0
  // (lowest range read as starting above 0.5 mm, from memory of the paper's table).
  it.each([
    [0, 0],
    [0.5, 0],
    [0.51, 1],
    [1.0, 1],
    [1.01, 2],
    [2.0, 2],
    [2.01, 3],
    [4.0, 3],
    [4.01, 4],
    [8.0, 4],
    [8.01, 5],
    [25, 5],
  ])('%s mm scores %s', (mm, score) => {
    expect(cbctPaiScore(mm)).toBe(score);
  });
  it('rounds to 0.01 mm before the cut-off (Lamina rule): 1.004 scores 1, 1.006 scores 2', () => {
    expect(cbctPaiScore(1.004)).toBe(1);
    expect(cbctPaiScore(1.006)).toBe(2);
    expect(cbctPaiScore(3.1 - 2.1)).toBe(1); // 1.0000000000000002 in floating point
  });
  it('adds the E (cortical expansion) and D (cortical destruction) suffixes', () => {
    expect(cbctPai(3).label).toBe('3');
    expect(cbctPai(3, { expansion: true }).label).toBe('3E');
    expect(cbctPai(9, { destruction: true }).label).toBe('5D');
    expect(cbctPai(9, { expansion: true, destruction: true })).toMatchObject({ score: 5, label: '5ED', expansion: true, destruction: true });
  });
  it('refuses cortical changes without a lesion, and negative or non-finite diameters', () => {
    expect(() => cbctPai(0.3, { destruction: true })).toThrow(/no lesion/);
    expect(() => cbctPaiScore(-1)).toThrow(/negative/);
    expect(() => cbctPaiScore(Number.NaN)).toThrow(/finite/);
  });
});

describe('fill-length class (Sjögren et al. 1990, J Endod 16:498–504; Ng et al. 2008, Int Endod J 41:6–31)', () => {
  // Published classes: 0–2 mm short of the radiographic apex; more than 2 mm short; beyond the apex.
  it.each([
    [-3, 'beyond'],
    [-0.01, 'beyond'],
    [0, 'within'],
    [0.5, 'within'], // a common working-length allowance (common practice)
    [2.0, 'within'],
    [2.01, 'short'],
    [6, 'short'],
  ] as const)('%s mm short of the apex is %s', (mm, cls) => {
    expect(fillLengthClass(mm)).toBe(cls);
  });
  it('applies the 0.01 mm rounding rule: 21.3 - 19.3 is within, -0.004 is flush', () => {
    expect(fillLengthClass(21.3 - 19.3)).toBe('within');
    expect(fillLengthClass(-0.004)).toBe('within');
    expect(fillLengthClass(-0.006)).toBe('beyond');
  });
  it('rejects non-finite distances', () => {
    expect(() => fillLengthClass(Number.POSITIVE_INFINITY)).toThrow(/finite/);
  });
});

describe('SCORING_CAUTION', () => {
  it('says the scores support judgement and are not a diagnosis', () => {
    expect(SCORING_CAUTION).toMatch(/clinical judgement/);
    expect(SCORING_CAUTION).toMatch(/not a diagnosis/);
  });
});
