import { describe, expect, it } from 'vitest';
import { PatientCreateSchema, PatientSchema, PatientUpdateSchema } from '@/lib/schemas/patient';
import { ReferrerCreateSchema, ReferrerUpdateSchema } from '@/lib/schemas/referrer';

const valid = {
  registryNumber: 'EB-00042',
  givenName: 'Maren',
  familyName: 'Quillfeather',
  dateOfBirth: '1971-04-09',
  sex: 'female',
  email: 'maren.q@patients.lamina-demo.invalid',
  phone: '07700 900123',
  postalCode: 'ZZ1 4QT',
  recallContact: true,
  recallChannel: 'email',
  researchUse: true,
  consentDate: '2024-03-01',
};

function issues(schema: { safeParse(v: unknown): { success: boolean; error?: { issues: { path: PropertyKey[]; message: string }[] } } }, value: unknown) {
  const r = schema.safeParse(value);
  return r.success ? [] : r.error!.issues.map((i) => `${i.path.join('.')}: ${i.message}`);
}

describe('PatientCreateSchema', () => {
  it('accepts a complete patient and normalises the e-mail', () => {
    const r = PatientCreateSchema.parse({ ...valid, email: '  Maren.Q@Patients.Lamina-Demo.Invalid ' });
    expect(r.email).toBe('maren.q@patients.lamina-demo.invalid');
  });

  it('turns empty optional text into undefined', () => {
    const r = PatientCreateSchema.parse({ ...valid, recallChannel: 'phone', email: '', postalCode: '  ' });
    expect(r.email).toBeUndefined();
    expect(r.postalCode).toBeUndefined();
  });

  it('does not take who recorded the consents from input', () => {
    const r = PatientCreateSchema.parse({ ...valid, consentRecordedBy: 'someone' });
    expect('consentRecordedBy' in r).toBe(false);
  });

  it.each<[string, Record<string, unknown>, RegExp]>([
    ['registry number with spaces inside is refused', { registryNumber: 'EB 42' }, /registryNumber: Use letters, digits/],
    ['empty registry number', { registryNumber: ' ' }, /registryNumber: Enter the registry number/],
    ['long registry number', { registryNumber: 'X'.repeat(33) }, /at most 32/],
    ['missing given name', { givenName: '' }, /givenName: Enter the given name/],
    ['impossible date of birth', { dateOfBirth: '1971-02-30' }, /dateOfBirth: Enter the date of birth as a real date/],
    ['date of birth before 1900', { dateOfBirth: '1899-12-31' }, /between 1900 and 2100/],
    ['unknown sex', { sex: 'f' }, /sex: Choose the sex: female, male, other, not_stated/],
    ['bad e-mail', { email: 'maren@' }, /email: Enter a valid e-mail address/],
    ['phone with letters', { phone: '0770 CALL ME' }, /phone: Use digits/],
    ['phone too short', { phone: '12 34' }, /6 to 15 digits/],
    ['recall yes but channel none', { recallChannel: 'none' }, /recallChannel: Choose how to contact/],
    ['recall no but channel e-mail', { recallContact: false }, /recallChannel: .*must be none/],
    ['recall by e-mail without address', { email: '' }, /email: Recalls by e-mail need an e-mail address/],
    ['recall by phone without number', { recallChannel: 'phone', phone: undefined }, /phone: Recalls by phone need a phone number/],
    ['recall by post without postal code', { recallChannel: 'post', postalCode: '' }, /postalCode: Recalls by post need a postal code/],
    ['consent before birth', { consentDate: '1970-01-01' }, /consentDate: The consent date is before the date of birth/],
    ['research consent not stated', { researchUse: undefined }, /researchUse: Say whether/],
    ['consent as a string', { recallContact: 'yes' }, /recallContact/],
  ])('%s', (_, change, message) => {
    expect(issues(PatientCreateSchema, { ...valid, ...change }).join('\n')).toMatch(message);
  });

  it('accepts no recall contact with channel none and no contact details', () => {
    expect(issues(PatientCreateSchema, { ...valid, recallContact: false, recallChannel: 'none', email: '', phone: '' })).toEqual([]);
  });
});

describe('PatientSchema and PatientUpdateSchema', () => {
  it('a stored patient needs its id', () => {
    expect(issues(PatientSchema, valid).join()).toMatch(/^id:/);
    expect(issues(PatientSchema, { ...valid, id: 'p1', consentRecordedBy: 'u1' })).toEqual([]);
  });

  it('a patch checks only what it carries, and never unarchives', () => {
    expect(PatientUpdateSchema.parse({ givenName: 'Mara' })).toEqual({ givenName: 'Mara' });
    expect(issues(PatientUpdateSchema, { email: '' })).toEqual([]);
    expect(issues(PatientUpdateSchema, { recallChannel: 'email', recallContact: true, email: '' }).join()).toMatch(/Recalls by e-mail/);
    expect(issues(PatientUpdateSchema, { dateOfBirth: '2024-02-30' }).join()).toMatch(/real date/);
  });
});

describe('Referrer schemas', () => {
  it('needs a name; practice and e-mail are optional', () => {
    expect(ReferrerCreateSchema.parse({ name: ' Dr Tamsin Orle ', practiceName: '', email: '' })).toEqual({
      name: 'Dr Tamsin Orle',
      practiceName: undefined,
      email: undefined,
    });
    expect(issues(ReferrerCreateSchema, { name: '' }).join()).toMatch(/name: Enter the referring dentist/);
    expect(issues(ReferrerCreateSchema, { name: 'A', email: 'not-an-address' }).join()).toMatch(/email: Enter a valid/);
    expect(ReferrerUpdateSchema.parse({ email: 'T.Orle@Lamina-Demo.Invalid' })).toEqual({ email: 't.orle@lamina-demo.invalid' });
  });
});
