import { describe, expect, it } from 'vitest';
import { healingObservations, outcomeAtMilestone, type OutcomeCase } from '@/lib/outcomes';
import { coxModel, coxTime, designMatrix, designRow, EPV_MIN, fitProblem, logisticModel, MAX_ABS_COEF, MIN_LEVEL_ROWS, multivariable, runaway, type ModelTerm } from '@/lib/outcomes/model';
import { coxPH, logisticRegression } from '@/lib/stats';
import { outcomeCase, present } from '../../support/outcome-cases';

// The multivariable view's design matrix and models (issue 12, item 4), checked by hand on small
// invented selections. The model fits themselves are lib/stats' coxPH and logisticRegression (checked
// against R in tests/reference); here: which rows and columns go in, and that a fit which cannot be
// made is a message, not an exception.
let seq = 0;
function kase(change: Partial<OutcomeCase> = {}): OutcomeCase {
  seq += 1;
  return outcomeCase({ id: `c${seq}`, patientId: `p${seq}`, ...change });
}
const many = (n: number, change: Partial<OutcomeCase>) => Array.from({ length: n }, () => kase(change));

describe('designMatrix', () => {
  it('the most frequent level is the reference; one indicator column per other level, in the factor’s order', () => {
    const rows = [...many(12, { toothGroup: 'incisor' }), ...many(30, { toothGroup: 'molar' }), ...many(15, { toothGroup: 'premolar' })];
    const d = designMatrix(rows, [{ key: 'group' }]);
    expect(d.references).toEqual([{ covariate: 'group', label: 'Tooth group', level: 'Molar', rows: 30 }]);
    expect(d.columns.map((c) => c.term)).toEqual(['Incisor', 'Premolar']);
    expect(designRow(d, 0)).toEqual([1, 0]); // an incisor
    expect(designRow(d, 12)).toEqual([0, 0]); // a molar (reference)
    expect(designRow(d, 50)).toEqual([0, 1]); // a premolar
    expect(d.rows).toHaveLength(57);
    expect(d.notes).toEqual([]);
  });

  it(`an unordered factor: levels under ${MIN_LEVEL_ROWS} cases are pooled when together they reach it, else left out with their rows`, () => {
    const pooled = designMatrix([...many(20, { toothGroup: 'molar' }), ...many(6, { toothGroup: 'incisor' }), ...many(5, { toothGroup: 'canine' })], [{ key: 'group' }]);
    expect(pooled.columns.map((c) => c.term)).toEqual(['Canine + Incisor']);
    expect(pooled.rows).toHaveLength(31);
    expect(pooled.notes[0]).toMatch(/Canine \+ Incisor pooled into one level/);
    const dropped = designMatrix([...many(20, { toothGroup: 'molar' }), ...many(15, { toothGroup: 'premolar' }), ...many(4, { toothGroup: 'incisor' })], [{ key: 'group' }]);
    expect(dropped.columns.map((c) => c.term)).toEqual(['Premolar']);
    expect(dropped.rows).toHaveLength(35); // the 4 incisors are out
    expect(dropped.notes[0]).toMatch(/4 cases of Incisor left out of the model/);
  });

  it('an ordered factor (lesion bands): a small band merges with its smaller neighbour, in order', () => {
    const rows = [...many(25, { lesionDiameterMm: 0 }), ...many(14, { lesionDiameterMm: 3 }), ...many(12, { lesionDiameterMm: 7 }), ...many(3, { lesionDiameterMm: 12 })];
    const d = designMatrix(rows, [{ key: 'lesion' }]);
    expect(d.references[0]!.level).toBe('No lesion');
    expect(d.columns.map((c) => c.term)).toEqual(['Under 5 mm', '5 to under 10 mm + 10 mm or more']);
    expect(d.rows).toHaveLength(54);
    expect(d.notes[0]).toMatch(/10 mm or more \(3 cases\) merged with 5 to under 10 mm/);
  });

  it('a factor with one level (e.g. the clinician in a clinician’s own view) is left out, saying so; its rows stay', () => {
    const d = designMatrix([...many(20, { toothArch: 'upper', toothGroup: 'molar' }), ...many(20, { toothArch: 'lower', toothGroup: 'premolar' })], [{ key: 'clinician' }, { key: 'arch' }]);
    expect(d.columns.map((c) => `${c.label}: ${c.term}`)).toEqual(['Arch: Upper']); // a tie: the first in order (Lower) is the reference
    expect(d.references[0]!.level).toBe('Lower');
    expect(d.notes).toEqual(['Clinician is left out: one level only in this selection.']);
    expect(d.rows).toHaveLength(40);
  });

  it('lesion diameter and baseline PAI as numbers: one column each, the value itself; constant → left out', () => {
    const rows = [kase({ lesionDiameterMm: 0, baselinePai: 1 }), kase({ lesionDiameterMm: 6.5, baselinePai: 4 })];
    const d = designMatrix(rows, [{ key: 'lesion', numeric: true }, { key: 'pai', numeric: true }]);
    expect(d.columns.map((c) => [c.label, c.term, c.numeric])).toEqual([
      ['Lesion diameter before treatment', 'per mm', true],
      ['PAI before treatment', 'per PAI point', true],
    ]);
    expect([designRow(d, 0), designRow(d, 1)]).toEqual([
      [0, 1],
      [6.5, 4],
    ]);
    expect(d.x).toEqual(new Float64Array([0, 1, 6.5, 4])); // row-major, one typed array
    expect(designMatrix([kase({ baselinePai: 3 }), kase({ baselinePai: 3 })], [{ key: 'pai', numeric: true }]).notes[0]).toMatch(/same in every case/);
  });

  it('levelName names the levels (clinician ids to names) and a factor asked twice counts once', () => {
    const rows = [...many(12, { operatorId: 'u1' }), ...many(11, { operatorId: 'u2' })];
    const d = designMatrix(rows, [{ key: 'clinician' }, { key: 'clinician' }], { levelName: (_k, l) => (l === 'u1' ? 'Dr One' : 'Dr Two') });
    expect(d.references[0]!.level).toBe('Dr One');
    expect(d.columns.map((c) => c.term)).toEqual(['Dr Two']);
  });
});

/** A world where lesions and retreatment fail more often: 60 cases, 3 teeth per patient. */
function world(): OutcomeCase[] {
  const out: OutcomeCase[] = [];
  for (let i = 0; i < 60; i++) {
    const lesion = i % 3 === 0 ? 0 : i % 3 === 1 ? 3 : 7;
    const retreat = i % 4 === 0;
    const fails = (lesion > 0 && i % 5 < 2) || (retreat && i % 8 === 0) || i % 11 === 0;
    const reviews = fails ? [present(180, 2), present(365 + (i % 7) * 10, 4)] : [present(180, 3), present(365 + (i % 7) * 10, 1), present(730, 1)];
    out.push(kase({ id: `w${i}`, patientId: `wp${Math.floor(i / 3)}`, kind: retreat ? 'nonsurgical_retreatment' : 'primary_treatment', lesionDiameterMm: lesion, baselinePai: lesion === 0 ? 1 : 4, reviews }));
  }
  return out;
}

describe('coxModel and logisticModel', () => {
  it('the Cox model equals coxPH on the midpoint times with patient clusters; the logistic model equals logisticRegression', () => {
    const w = world();
    const m = multivariable(w, w, [{ key: 'kind' }, { key: 'lesion', numeric: true }], { endpoint: 'healing', minObs: 365 });
    const ints = healingObservations(w, 365);
    const ref = coxPH(w.map((c, i) => ({ ...coxTime(ints[i]!), x: [c.kind === 'nonsurgical_retreatment' ? 1 : 0, c.lesionDiameterMm], cluster: c.patientId })));
    expect(m.cox.error).toBeNull();
    expect(m.cox.terms.map((t) => t.ratio)).toEqual(ref.hazardRatio);
    expect(m.cox.terms.map((t) => t.lower)).toEqual(ref.lower);
    expect(m.cox.terms.map((t) => t.robustSe)).toEqual(ref.robustSe);
    expect(m.cox.terms[0]).toMatchObject({ label: 'Treatment kind', term: 'Non-surgical retreatment', reference: 'Primary root canal treatment' });
    expect([m.cox.cases, m.cox.patients, m.cox.events]).toEqual([60, 20, ints.filter((i) => i.right !== null).length]);
    expect(m.cox.epv).toBe(m.cox.events / 2);

    const judged = w.filter((c) => !['uncertain', null].includes(outcomeAtMilestone(c, 12, 365)));
    const lr = logisticRegression(judged.map((c) => ({ y: outcomeAtMilestone(c, 12, 365) === 'healed', x: [c.kind === 'nonsurgical_retreatment' ? 1 : 0, c.lesionDiameterMm], cluster: c.patientId })));
    expect(m.logistic.error).toBeNull();
    expect(m.logistic.terms.map((t) => t.ratio)).toEqual(lr.oddsRatio.slice(1));
    expect(m.logistic.terms.map((t) => t.upper)).toEqual(lr.upper.slice(1));
    expect(m.logistic.terms.map((t) => t.robustSe)).toEqual(lr.robustSe!.slice(1));
    expect(m.logistic.cases).toBe(judged.length);
    expect(m.logistic.events).toBe(Math.min(m.logistic.successes!, m.logistic.failures!));
  });

  it('a failure found at a review: the midpoint of (last clear review, that review]; censored at the last review', () => {
    expect(coxTime({ left: 180, right: 400 })).toEqual({ time: 290, event: true });
    expect(coxTime({ left: 0, right: 365 })).toEqual({ time: 182.5, event: true });
    expect(coxTime({ left: 730, right: null })).toEqual({ time: 730, event: false });
  });

  it(`events per variable under ${EPV_MIN} (Peduzzi et al. 1995, 1996) set the warning`, () => {
    const w = world();
    const m = multivariable(w, w, [{ key: 'kind' }, { key: 'lesion' }, { key: 'pai', numeric: true }], { endpoint: 'healing', minObs: 365 });
    expect(m.cox.parameters).toBe(4); // kind 1, lesion bands 2, PAI 1
    expect(m.cox.lowEpv).toBe((m.cox.epv ?? 0) < 10);
    expect(m.logistic.lowEpv).toBe(true); // a handful of failures at 12 months for 4 parameters
  });

  it('separation is named, not thrown: a level with no failures (Cox) or only successes (logistic)', () => {
    const w = [...world(), ...many(12, { kind: 'apical_surgery', reviews: [present(365, 1), present(730, 1)] })];
    const cox = coxModel(w, w, [{ key: 'kind' }], { endpoint: 'healing', minObs: 365 });
    expect(cox.terms).toEqual([]);
    expect(cox.error).toMatch(/Treatment kind: .*has no events.*separation/);
    const logit = logisticModel(w, [{ key: 'kind' }], { minObs: 365 });
    expect(logit.error).toMatch(/only successes.*separation/);
  });

  it('collinear factors, no events, nothing left in the model: a message each', () => {
    // every molar is lower and every premolar upper: group and arch say the same
    const w = world().map((c, i) => ({ ...c, toothGroup: i % 2 ? 'molar' : 'premolar', toothArch: (i % 2 ? 'lower' : 'upper') as 'lower' | 'upper' }));
    const m = multivariable(w, w, [{ key: 'group' }, { key: 'arch' }], { endpoint: 'healing', minObs: 365 });
    expect(m.cox.error).toMatch(/collinear/);
    expect(m.logistic.error).toMatch(/collinear/);
    const healthy = many(30, { reviews: [present(365, 1)], lesionDiameterMm: 0 }).map((c, i) => ({ ...c, toothArch: (i % 2 ? 'upper' : 'lower') as 'upper' | 'lower' }));
    expect(coxModel(healthy, healthy, [{ key: 'arch' }], { endpoint: 'tooth', minObs: 365 }).error).toMatch(/No failures/);
    expect(logisticModel(healthy, [{ key: 'arch' }], { minObs: 365 }).error).toMatch(/both outcomes/);
    expect(coxModel(healthy, healthy, [{ key: 'clinician' }], { endpoint: 'tooth', minObs: 365 }).error).toMatch(/No factor is left/);
    expect(coxModel([], [], [{ key: 'kind' }], { endpoint: 'healing', minObs: 365 })).toMatchObject({ cases: 0, error: expect.stringMatching(/No factor/) });
  });

  it('cases without a review are left out of the Cox model, saying so', () => {
    const w = [...world(), ...many(5, { reviews: [] })];
    const m = coxModel(w, w, [{ key: 'kind' }], { endpoint: 'healing', minObs: 365 });
    expect(m.cases).toBe(60);
    expect(m.notes).toContain('5 cases with no review yet left out.');
  });

  it('fitProblem turns lib/stats’ messages into plain words naming the column', () => {
    const cols = [{ covariate: 'kind' as const, label: 'Treatment kind', term: 'Apical surgery', numeric: false, reference: 'Primary' }];
    expect(fitProblem(new Error('coxPH did not converge: the coefficient of covariate 0 appears to be infinite'), cols)).toMatch(/infinity \(Treatment kind: Apical surgery\)/);
    expect(fitProblem(new Error('logisticRegression did not converge in 25 iterations'), cols)).toMatch(/did not converge/);
    expect(fitProblem(new Error('something new'), cols)).toBe('The model could not be fitted on these cases.');
  });
});

describe('designMatrix: levels that share a shown name', () => {
  it('two former clinicians stay two levels, named apart', () => {
    const rows = [...many(12, { operatorId: 'u1' }), ...many(11, { operatorId: 'u2' }), ...many(10, { operatorId: 'u3' })];
    const d = designMatrix(rows, [{ key: 'clinician' }], { levelName: (_k, l) => (l === 'u1' ? 'Dr One' : 'Former clinician') });
    expect(d.references[0]!.level).toBe('Dr One');
    expect(d.columns.map((c) => c.term)).toEqual(['Former clinician', 'Former clinician (2)']);
    expect(designRow(d, 12)).toEqual([1, 0]);
    expect(designRow(d, 23)).toEqual([0, 1]);
  });
});

describe('runaway ratios (quasi-separation the fit did not stop on)', () => {
  const term = (coef: number): ModelTerm => ({ covariate: 'year', label: 'Year of treatment', term: '2022', numeric: false, reference: '2021', coef, se: 1, robustSe: 1, ratio: Math.exp(coef), lower: 0, upper: 0, pValue: 1 });
  it(`a log ratio beyond ±${MAX_ABS_COEF} (a ratio of 2.9e7, as once seen on a small selection) is reported, naming the term; within it, nothing`, () => {
    expect(runaway([term(Math.log(2.9e7))])).toMatch(/Year of treatment: 2022 runs towards infinity \(quasi-separation/);
    expect(runaway([term(-12)])).toMatch(/runs towards 0/);
    expect(runaway([term(NaN)])).not.toBeNull();
    expect(runaway([term(2.3), term(-9.9)])).toBeNull();
  });
});
