import { describe, expect, it } from 'vitest';
import { applyFilter, byFactor, compareLevels, curves, FACTOR_KEYS, FACTORS, isLevelCode, levelLabel, type FactorKey, type OutcomeCase } from '@/lib/outcomes';
import { LevelFilterQuery, levelParams, OutcomeFactorQuery, OutcomeFilterQuery } from '@/lib/schemas/outcomes';
import { fisherExact2x2 } from '@/lib/stats';
import { outcomeCase, present } from '../../support/outcome-cases';

// Issue 12, item 2 (the factors a lead audits by) and item 8 (level filters in the URL).
// Words come from the vocabularies of lib/schemas/case.ts; which fields apply to which kind from
// its CASE_FIELDS (no sealer after apical surgery: common practice — no root canal is filled).
let n = 0;
const kase = (change: Partial<OutcomeCase> = {}) => outcomeCase({ id: `c${++n}`, ...change });
const healed = [present(400, 1)];
const disease = [present(400, 4)];
const level = (f: FactorKey, c: OutcomeCase) => FACTORS[f].level(c);

describe('the new factors (issue 12, item 2)', () => {
  it('voids: homogeneous, voids, not recorded, and not applicable to a kind without a root filling', () => {
    expect(level('density', kase({ fillDensity: 'homogeneous' }))).toBe('Homogeneous (no voids)');
    expect(level('density', kase({ fillDensity: 'voids' }))).toBe('Voids seen');
    expect(level('density', kase({ fillDensity: null }))).toBe('Not recorded');
    expect(level('density', kase())).toBe('Not recorded'); // a row built without the field
    expect(level('density', kase({ kind: 'apical_surgery', fillDensity: null }))).toBe('Not applicable (no root filling)');
    expect(FACTORS.density.code(kase({ kind: 'vital_pulp_therapy' }))).toBe('not_applicable');
  });

  it('sealer and technique by their words; fill length not applicable after a pulpotomy', () => {
    expect(level('sealer', kase({ sealerClass: 'calcium_silicate' }))).toBe('Calcium silicate (bioceramic)');
    expect(level('sealer', kase({ sealerClass: 'epoxy_resin' }))).toBe('Epoxy resin');
    expect(level('technique', kase({ fillingTechnique: 'warm_vertical_compaction' }))).toBe('Warm vertical compaction');
    expect(level('technique', kase({ fillingTechnique: null }))).toBe('Not recorded');
    expect(level('fill', kase({ fillLengthClass: null }))).toBe('Not measured');
    expect(level('fill', kase({ kind: 'vital_pulp_therapy', fillLengthClass: null }))).toBe('Not applicable (no root filling)');
  });

  it('complications: none, each one, or two or more (levels that do not overlap)', () => {
    expect(level('complications', kase({ complications: [] }))).toBe('None recorded');
    expect(level('complications', kase())).toBe('None recorded');
    expect(level('complications', kase({ complications: ['separated_instrument'] }))).toBe('Separated instrument');
    expect(level('complications', kase({ complications: ['ledge', 'perforation'] }))).toBe('Two or more');
    expect(level('complications', kase({ kind: 'apical_surgery' }))).toBe('Not applicable (no canals treated)');
  });

  it('restorations: at completion (not recorded) and definitive (none recorded); referrer by id, none when absent', () => {
    expect(level('coronal', kase({ coronalRestoration: 'temporary' }))).toBe('Temporary');
    expect(level('coronal', kase({ coronalRestoration: 'none' }))).toBe('None');
    expect(level('coronal', kase({ coronalRestoration: null }))).toBe('Not recorded');
    expect(level('definitive', kase({ definitiveRestoration: 'crown', kind: 'apical_surgery' }))).toBe('Crown');
    expect(level('definitive', kase({ definitiveRestoration: null }))).toBe('None recorded');
    expect(FACTORS.referrer.code(kase({ referrerId: null }))).toBe('none');
    expect(FACTORS.referrer.code(kase({ referrerId: '0b5f3c1e-1111-4222-8333-944455556666' }))).toBe('0b5f3c1e-1111-4222-8333-944455556666');
  });

  it('every closed factor names each code once (curves group by the words) and knows its own codes', () => {
    for (const k of FACTOR_KEYS) {
      const levels = (FACTORS[k] as { levels?: Record<string, string> }).levels;
      if (!levels) continue;
      const words = Object.values(levels);
      expect(new Set(words).size, k).toBe(words.length);
      for (const code of Object.keys(levels)) expect(isLevelCode(k, code), `${k}:${code}`).toBe(true);
      expect(isLevelCode(k, 'nonsense'), k).toBe(false);
    }
    expect(isLevelCode('year', '2024')).toBe(true);
    expect(isLevelCode('year', '24')).toBe(false);
    expect(isLevelCode('referrer', 'none')).toBe(true);
    expect(isLevelCode('referrer', 'Dr X')).toBe(false);
  });

  it('by factor: codes beside the words, the vocabulary’s order, missing values last; Fisher’s exact on two judged levels', () => {
    const rows = [
      kase({ sealerClass: null, reviews: healed }),
      kase({ sealerClass: 'epoxy_resin', reviews: healed }),
      kase({ sealerClass: 'epoxy_resin', reviews: disease }),
      kase({ sealerClass: 'calcium_silicate', reviews: healed }),
      kase({ sealerClass: 'zinc_oxide_eugenol' }), // no review: in cases, not in n
    ];
    const t = byFactor(rows, 'sealer', 365);
    expect(t.levels.map((l) => [l.code, l.level, l.cases, l.strict.x, l.strict.n])).toEqual([
      ['zinc_oxide_eugenol', 'Zinc oxide–eugenol', 1, 0, 0],
      ['epoxy_resin', 'Epoxy resin', 2, 1, 2],
      ['calcium_silicate', 'Calcium silicate (bioceramic)', 1, 1, 1],
      ['not_recorded', 'Not recorded', 1, 1, 1],
    ]);
    // three judged levels → χ²; a level without judged cases is left out of the test
    expect(t.test?.method).toBe('chi-square');
    const two = byFactor(rows.slice(1, 4), 'sealer', 365);
    expect(two.test).toMatchObject({ method: 'fisher', pValue: fisherExact2x2([[1, 1], [1, 0]]).pValue });
  });

  it('open levels are named by the caller (clinicians, referrers) and then sorted by name', () => {
    const rows = [kase({ referrerId: 'b' }), kase({ referrerId: 'a' }), kase({ referrerId: null })];
    const names: Record<string, string> = { a: 'Zeta Dental', b: 'Alpha Dental', none: 'No referrer recorded' };
    const t = byFactor(rows, 'referrer', 365, (id) => names[id]!);
    expect(t.levels.map((l) => [l.code, l.level])).toEqual([
      ['b', 'Alpha Dental'],
      ['a', 'Zeta Dental'],
      ['none', 'No referrer recorded'],
    ]);
    expect(compareLevels(null)('Not recorded', 'Apples')).toBeGreaterThan(0);
  });

  it('survival curves per level of a new factor: one curve per level, numbers at risk each', () => {
    const rows = [kase({ fillDensity: 'voids', reviews: disease }), kase({ fillDensity: 'homogeneous', reviews: healed }), kase({ fillDensity: 'homogeneous', reviews: healed })];
    const c = curves(rows, rows, { endpoint: 'healing', method: 'km', factor: 'density', minObs: 365 });
    expect(c.curves.map((cv) => [cv.level, cv.n, cv.events, cv.atRisk[0]])).toEqual([
      ['Homogeneous (no voids)', 2, 0, 2],
      ['Voids seen', 1, 1, 1],
    ]);
    expect(c.logRank).not.toBeNull();
  });
});

describe('level filters in the URL (issue 12, item 8)', () => {
  it('parses f.<factor>=<code>,<code> beside the other filters; blanks and repeats ignored', () => {
    const q = OutcomeFilterQuery.parse({ kind: 'primary_treatment', 'f.group': 'molar, premolar,molar', 'f.pai': '4', 'f.sealer': '', factor: 'x' });
    expect(q).toEqual({ kind: 'primary_treatment', levels: { group: ['molar', 'premolar'], pai: ['4'] } });
    expect(OutcomeFilterQuery.parse({})).toEqual({ levels: {} });
    const f = OutcomeFactorQuery.parse({ factor: 'density', 'f.density': 'voids,not_recorded' });
    expect(f).toMatchObject({ factor: 'density', endpoint: 'healing', method: 'turnbull', levels: { density: ['voids', 'not_recorded'] } });
    expect(levelParams(q.levels)).toEqual({ 'f.group': 'molar,premolar', 'f.pai': '4' });
  });

  it('refuses unknown factors, unknown levels, the clinician (it has a filter of its own) and too many levels, under the URL’s key', () => {
    const r = LevelFilterQuery.safeParse({ 'f.horoscope': 'leo', 'f.group': 'molars', 'f.clinician': '0b5f3c1e-1111-4222-8333-944455556666', 'f.year': Array.from({ length: 41 }, (_, i) => 1990 + i).join(','), 'f.arch': 7 });
    expect(r.success).toBe(false);
    const issues = Object.fromEntries(r.error!.issues.map((i) => [i.path.join('.'), i.message]));
    expect(Object.keys(issues).sort()).toEqual(['f.arch', 'f.clinician', 'f.group', 'f.horoscope', 'f.year']);
    expect(issues['f.group']).toBe('“molars” is not a level of tooth group.');
  });

  it('applies them: any of the levels listed within a factor, every factor named', () => {
    const rows = [
      kase({ id: 'm4', toothGroup: 'molar', baselinePai: 4 }),
      kase({ id: 'm2', toothGroup: 'molar', baselinePai: 2 }),
      kase({ id: 'p4', toothGroup: 'premolar', baselinePai: 4 }),
      kase({ id: 'i5', toothGroup: 'incisor', baselinePai: 5, sealerClass: null }),
    ];
    const ids = (levels: Record<string, string[]>) => applyFilter(rows, { levels }).map((c) => c.id);
    expect(ids({ group: ['molar'] })).toEqual(['m4', 'm2']);
    expect(ids({ group: ['molar', 'premolar'], pai: ['4'] })).toEqual(['m4', 'p4']);
    expect(ids({ pai: ['4', '5'], sealer: ['not_recorded'] })).toEqual(['m4', 'p4', 'i5']);
    expect(ids({ group: [] })).toEqual(['m4', 'm2', 'p4', 'i5']);
    expect(applyFilter(rows, { kind: 'primary_treatment', levels: { group: ['incisor'] } }).map((c) => c.id)).toEqual(['i5']);
    expect(levelLabel('pai', '4')).toBe('PAI 4');
  });
});
