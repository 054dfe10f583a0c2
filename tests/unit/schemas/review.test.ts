import { describe, expect, it } from 'vitest';
import { ReviewCreateSchema, ReviewUpdateSchema } from '@/lib/schemas/review';

const base = {
  caseId: 'c1',
  visitId: 'v12',
  assessorId: 'u1',
  reviewDate: '2025-03-20',
  toothStatus: 'present',
  paiScore: 2,
  lesionDiameterMm: 0,
  painOnBiting: false,
  tenderToPercussion: false,
  swelling: false,
  sinusTract: false,
  mobility: false,
  otherFindings: '',
};

function issues(value: unknown, schema: { safeParse(v: unknown): { success: boolean; error?: { issues: { path: PropertyKey[]; message: string }[] } } } = ReviewCreateSchema) {
  const r = schema.safeParse(value);
  return r.success ? '' : r.error!.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('\n');
}

describe('ReviewCreateSchema', () => {
  it('accepts raw findings and never an outcome', () => {
    const r = ReviewCreateSchema.parse({ ...base, outcome: 'healed' });
    expect(r).not.toHaveProperty('outcome');
    expect(r.otherFindings).toBeUndefined();
  });

  it('an unplanned review has no visit', () => {
    expect(ReviewCreateSchema.parse({ ...base, visitId: '' }).visitId).toBeUndefined();
  });

  it.each<[string, Record<string, unknown>, RegExp]>([
    ['present tooth without PAI', { paiScore: undefined }, /paiScore: Score the periapical index/],
    ['present tooth without lesion size', { lesionDiameterMm: undefined }, /lesionDiameterMm: Enter the largest lesion diameter/],
    ['PAI 9', { paiScore: 9 }, /between 1 and 5/],
    ['PAI 1 with a lesion', { paiScore: 1, lesionDiameterMm: 1.5 }, /PAI 1 means normal/],
    ['PAI 5 without a lesion', { paiScore: 5 }, /PAI 5 describes a radiolucent area/],
    ['unknown tooth status', { toothStatus: 'lost' }, /toothStatus: Choose the tooth status: present, extracted, retreated, surgery/],
    ['bad date', { reviewDate: '20-03-2025' }, /reviewDate: Enter the review date as a real date/],
    ['no assessor', { assessorId: undefined }, /assessorId/],
    ['long note', { otherFindings: 'x'.repeat(501) }, /At most 500 characters/],
    ['sign as text', { swelling: 'yes' }, /swelling/],
  ])('%s', (_, change, message) => {
    expect(issues({ ...base, ...change })).toMatch(message);
  });

  it('drops the findings of an extracted tooth', () => {
    const r = ReviewCreateSchema.parse({ ...base, toothStatus: 'extracted', paiScore: 9, swelling: true });
    expect(r).not.toHaveProperty('paiScore');
    expect(r).not.toHaveProperty('swelling');
  });

  it('a retreated tooth may be scored or not', () => {
    expect(issues({ ...base, toothStatus: 'retreated', paiScore: undefined, lesionDiameterMm: undefined })).toBe('');
    expect(issues({ ...base, toothStatus: 'surgery', paiScore: 3, lesionDiameterMm: 2 })).toBe('');
  });

  it('a correction checks only what it carries', () => {
    expect(issues({ paiScore: 3 }, ReviewUpdateSchema)).toBe('');
    expect(issues({ toothStatus: 'present', paiScore: undefined }, ReviewUpdateSchema)).toMatch(/Score the periapical index/);
  });
});
