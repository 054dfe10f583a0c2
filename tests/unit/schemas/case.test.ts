import { describe, expect, it } from 'vitest';
import {
  CASE_FIELDS,
  CASE_KINDS,
  CaseCreateSchema,
  CaseImportSchema,
  CaseSchema,
  CaseUpdateSchema,
  ISO_APICAL_SIZES,
  buildCaseSchemas,
  fieldApplies,
  fieldsFor,
} from '@/lib/schemas/case';

const base = {
  patientId: 'p1',
  tooth: 36,
  kind: 'primary_treatment',
  operatorId: 'u1',
  referrerId: 'r1',
  startDate: '2024-03-04',
  completionDate: '2024-03-18',
  pulpalDiagnosis: 'pulp_necrosis',
  apicalDiagnosis: 'asymptomatic_apical_periodontitis',
  paiScore: 4,
  lesionDiameterMm: 3.5,
  preopSymptoms: ['pain_on_biting'],
  sinusTract: false,
  probingDepthMm: 3,
  canals: [
    { name: 'mb', workingLengthMm: 20.5, apicalSize: 30, fillToApexMm: 0.5 },
    { name: 'ML', workingLengthMm: 20, apicalSize: 30, fillToApexMm: 1.0 },
    { name: 'D', workingLengthMm: 21, apicalSize: 40, fillToApexMm: 1.5 },
  ],
  fillingTechnique: 'continuous_wave',
  sealerClass: 'epoxy_resin',
  apicalPatency: true,
  complications: [],
  fillDensity: 'homogeneous',
  coronalRestoration: 'direct_composite',
  definitiveRestoration: 'crown',
  definitiveRestorationDate: '2024-05-02',
};

type Parser = { safeParse(v: unknown): { success: boolean; error?: { issues: { path: PropertyKey[]; message: string }[] } } };
function issues(schema: Parser, value: unknown): string {
  const r = schema.safeParse(value);
  return r.success ? '' : r.error!.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('\n');
}

describe('CaseCreateSchema: a valid primary treatment', () => {
  it('parses and normalises canal names', () => {
    const c = CaseCreateSchema.parse(base);
    expect(c.canals!.map((x) => x.name)).toEqual(['MB', 'ML', 'D']);
    expect(c.tooth).toBe(36);
  });

  it('reads the tooth from a string', () => {
    expect(CaseCreateSchema.parse({ ...base, tooth: ' 46 ' }).tooth).toBe(46);
  });

  it('a case in progress needs no canals, fill or completion date', () => {
    const { canals: _c, completionDate: _d, fillDensity: _f, definitiveRestoration: _r, definitiveRestorationDate: _rd, ...inProgress } = base;
    expect(issues(CaseCreateSchema, inProgress)).toBe('');
  });

  it('accepts every ISO 3630-1 size and only those', () => {
    for (let size = 1; size <= 150; size++) {
      const ok = issues(CaseCreateSchema, { ...base, canals: [{ name: 'P', workingLengthMm: 22, apicalSize: size }] }) === '';
      expect([size, ok]).toEqual([size, ISO_APICAL_SIZES.includes(size)]);
    }
  });
});

describe('CaseCreateSchema: ranges, units and rules', () => {
  const canal = (change: Record<string, unknown>) => ({ canals: [{ ...base.canals[0], ...change }] });
  it.each<[string, Record<string, unknown>, RegExp]>([
    ['tooth that is no tooth', { tooth: 19 }, /tooth: 19 is no tooth.*FDI tooth is 36/],
    ['primary tooth by default', { tooth: 75 }, /tooth: 75 is a primary \(baby\) tooth/],
    ['tooth as a decimal', { tooth: 3.6 }, /tooth: 3.6 is not a tooth number/],
    ['unknown kind', { kind: 'pulpectomy' }, /kind: Choose the kind of treatment: primary_treatment/],
    ['completion before start', { completionDate: '2024-03-01' }, /completionDate: The completion date is before the start date/],
    ['impossible start date', { startDate: '2024-02-30' }, /startDate: Enter the start date as a real date/],
    ['PAI 0', { paiScore: 0 }, /paiScore: The periapical index \(PAI\) must be between 1 and 5/],
    ['PAI 6', { paiScore: 6 }, /between 1 and 5/],
    ['PAI 2.5', { paiScore: 2.5 }, /whole number/],
    ['negative lesion', { lesionDiameterMm: -1 }, /lesionDiameterMm: The lesion diameter must be between 0 and 40 mm/],
    ['lesion of 45 mm', { lesionDiameterMm: 45 }, /between 0 and 40 mm/],
    ['lesion to 0.01 mm', { lesionDiameterMm: 3.25 }, /Record the lesion diameter to 0.1 mm/],
    ['PAI 1 with a lesion', { paiScore: 1, lesionDiameterMm: 2 }, /PAI 1 means normal periapical structures/],
    ['PAI 4 without a lesion', { paiScore: 4, lesionDiameterMm: 0 }, /PAI 4 describes a radiolucent area/],
    ['probing 0 mm', { probingDepthMm: 0 }, /probingDepthMm: The deepest probing depth must be between 1 and 15 mm/],
    ['probing 3.5 mm', { probingDepthMm: 3.5 }, /whole number mm/],
    ['symptom twice', { preopSymptoms: ['swelling', 'swelling'] }, /Each symptom once only/],
    ['unknown symptom', { preopSymptoms: ['ache'] }, /preopSymptoms.0: Choose symptom/],
    ['working length 50 mm', canal({ workingLengthMm: 50 }), /canals.0.workingLengthMm: The working length must be between 8 and 35 mm/],
    ['working length 2.05 cm typed as 2.05', canal({ workingLengthMm: 2.05 }), /between 8 and 35 mm/],
    ['apical size 27', canal({ apicalSize: 27 }), /canals.0.apicalSize: Use an ISO 3630-1 size/],
    ['fill 12 mm short', canal({ fillToApexMm: 12 }), /canals.0.fillToApexMm: .* between -5 and 10 mm/],
    ['canal name too long', canal({ name: 'MESIAL' + 'X' }), /at most 6 characters/],
    ['canal name with a space', canal({ name: 'M B' }), /letters and digits/],
    ['seven canals', { canals: ['A', 'B', 'C', 'D', 'E', 'F', 'G'].map((name) => ({ name })) }, /canals: At most 6 canals/],
    ['canal twice', { canals: [{ name: 'MB' }, { name: 'mb' }] }, /canals.1.name: Canal MB is listed twice \(canals 1 and 2\)/],
    ['completed without canals', { canals: [] }, /canals: Add at least one canal/],
    ['completed, canals left out', { canals: undefined }, /canals: Add at least one canal/],
    ['fill read without completion', { completionDate: '' }, /canals.0.fillToApexMm: .* enter the completion date first/],
    ['fill beyond apex without the complication', canal({ fillToApexMm: -0.5 }), /complications: Canal MB is filled 0.5 mm beyond the apex/],
    ['complication twice', { complications: ['ledge', 'ledge'] }, /Each complication once only/],
    ['retreatment of an untreated tooth', { kind: 'nonsurgical_retreatment' }, /pulpalDiagnosis: A retreatment is of a previously treated tooth/],
    ['primary treatment of a treated tooth', { pulpalDiagnosis: 'previously_treated' }, /gets a retreatment or apical surgery/],
    ['vital pulp therapy of a necrotic pulp', { kind: 'vital_pulp_therapy' }, /Vital pulp therapy needs a vital pulp/],
    ['regenerative procedure of a vital pulp', { kind: 'regenerative_endodontics', pulpalDiagnosis: 'reversible_pulpitis' }, /regenerative procedure is for a necrotic pulp/],
    ['definitive restoration date without type', { definitiveRestoration: undefined }, /definitiveRestoration: Say which definitive restoration/],
    ['definitive restoration before completion', { definitiveRestorationDate: '2024-03-10' }, /definitiveRestorationDate: .* before the treatment was completed/],
    ['temporary as definitive', { definitiveRestoration: 'temporary' }, /definitiveRestoration: Choose the definitive restoration/],
    ['missing operator', { operatorId: '' }, /operatorId: Missing id/],
  ])('%s', (_, change, message) => {
    expect(issues(CaseCreateSchema, { ...base, ...change })).toMatch(message);
  });

  it('accepts a fill beyond the apex when the complication is ticked', () => {
    expect(issues(CaseCreateSchema, { ...base, ...canal({ fillToApexMm: -0.5 }), complications: ['material_beyond_apex'] })).toBe('');
  });

  it('accepts a retreatment of a previously treated tooth', () => {
    expect(issues(CaseCreateSchema, { ...base, kind: 'nonsurgical_retreatment', pulpalDiagnosis: 'previously_treated' })).toBe('');
  });
});

describe('fields that do not apply to the kind', () => {
  const surgery = {
    ...base,
    kind: 'apical_surgery',
    pulpalDiagnosis: 'previously_treated',
    rootEndFilling: 'calcium_silicate',
    // left over from the form before the kind changed, some of it invalid:
    canals: [{ name: 'M B', workingLengthMm: 99 }],
    fillingTechnique: 'not-a-technique',
    complications: ['ledge'],
  };

  it('are dropped before validation for apical surgery', () => {
    const r = CaseCreateSchema.safeParse(surgery);
    expect(r.success).toBe(true);
    expect(r.data).not.toHaveProperty('canals');
    expect(r.data).not.toHaveProperty('fillingTechnique');
    expect(r.data).not.toHaveProperty('complications');
    expect(r.data).not.toHaveProperty('fillDensity');
    expect(r.data!.rootEndFilling).toBe('calcium_silicate');
  });

  it('surgery fields are dropped for a primary treatment', () => {
    const r = CaseCreateSchema.parse({ ...base, rootEndFilling: 'calcium_silicate', pulpTherapyType: 'full_pulpotomy' });
    expect(r).not.toHaveProperty('rootEndFilling');
    expect(r).not.toHaveProperty('pulpTherapyType');
  });

  it.each<[string, string[], string[]]>([
    ['primary_treatment', ['case', 'diagnosis', 'canals', 'obturation', 'complications', 'afterTreatment', 'restoration'], ['canals.fillToApexMm', 'fillingTechnique']],
    ['nonsurgical_retreatment', ['case', 'diagnosis', 'canals', 'obturation', 'complications', 'afterTreatment', 'restoration'], ['canals.workingLengthMm']],
    ['apical_surgery', ['case', 'diagnosis', 'surgery', 'restoration'], ['rootEndFilling']],
    ['vital_pulp_therapy', ['case', 'diagnosis', 'pulpTherapy', 'restoration'], ['pulpTherapyType', 'cappingMaterial']],
    ['regenerative_endodontics', ['case', 'diagnosis', 'pulpTherapy', 'restoration'], ['cappingMaterial']],
  ])('fieldsFor(%s)', (kind, sections, someFields) => {
    const plan = fieldsFor(kind as (typeof CASE_KINDS)[number]);
    expect(plan.sections).toEqual(sections);
    for (const f of someFields) expect(plan.fields).toContain(f);
    expect(plan.fields).toContain('tooth');
    expect(plan.fields).toContain('paiScore');
  });

  it('surgery shows no canal, fill or obturation field; regenerative no pulp therapy type', () => {
    expect(fieldsFor('apical_surgery').fields.filter((f) => f.startsWith('canals') || f === 'fillDensity' || f === 'sealerClass')).toEqual([]);
    expect(fieldApplies('regenerative_endodontics', 'pulpTherapyType')).toBe(false);
  });

  it('every schema field is described in CASE_FIELDS', () => {
    const shape = Object.keys(buildCaseSchemas().CaseObject.shape).filter((k) => k !== 'id');
    const described = Object.keys(CASE_FIELDS).filter((k) => !k.includes('.'));
    expect(shape.sort()).toEqual(described.sort());
  });
});

describe('variants', () => {
  it('a stored case needs an id', () => {
    expect(issues(CaseSchema, base)).toMatch(/^id:/);
    expect(issues(CaseSchema, { ...base, id: 'c1' })).toBe('');
  });

  it('a patch checks only what it carries', () => {
    expect(CaseUpdateSchema.parse({ paiScore: 3 })).toEqual({ paiScore: 3 });
    expect(issues(CaseUpdateSchema, { paiScore: 7 })).toMatch(/between 1 and 5/);
    expect(issues(CaseUpdateSchema, { startDate: '2024-03-10', completionDate: '2024-03-01' })).toMatch(/before the start date/);
    expect(issues(CaseUpdateSchema, { canals: [{ name: 'P', fillToApexMm: -1 }] })).toBe(''); // complications not in the patch
  });

  it('the import variant has no ids and requires the completion date', () => {
    const { patientId: _p, operatorId: _o, referrerId: _r, ...row } = base;
    expect(issues(CaseImportSchema, row)).toBe('');
    expect(issues(CaseImportSchema, { ...row, completionDate: undefined })).toMatch(/completionDate: Enter the completion date/);
  });

  it('a practice that accepts primary teeth builds its own schemas', () => {
    const { CaseCreateSchema: withPrimary } = buildCaseSchemas({ allowPrimaryTeeth: true });
    expect(issues(withPrimary, { ...base, tooth: 75 })).toBe('');
    expect(issues(withPrimary, { ...base, tooth: 76 })).toMatch(/1–5 in a primary quadrant/);
  });
});
