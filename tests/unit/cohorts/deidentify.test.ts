/**
 * De-identification rules of the research export (lib/cohorts/deidentify.ts). Source of each rule:
 * HIPAA Safe Harbor, 45 CFR 164.514(b)(2)(i) — (B) ZIP codes, (C) dates and ages over 89 — and
 * HHS, Guidance Regarding Methods for De-identification of PHI (2012) for the restricted
 * three-digit ZIP areas (the list from memory).
 */
import { describe, expect, it } from 'vitest';
import { ageBand, codeBook, postalPrefix, pseudonym, RESTRICTED_ZIP3, yearPeriod } from '@/lib/cohorts/deidentify';

const A = Buffer.from('secret-a-0123456789abcdef');
const B = Buffer.from('secret-b-0123456789abcdef');

describe('pseudonym (HMAC-SHA256 under the export secret)', () => {
  it('is stable within an export, differs between exports and kinds, and shows nothing of the id', () => {
    const id = '3f2a8c1e-1111-4222-a333-444455556666';
    expect(pseudonym(A, 'patient', id)).toBe(pseudonym(A, 'patient', id));
    expect(pseudonym(A, 'patient', id)).not.toBe(pseudonym(B, 'patient', id));
    expect(pseudonym(A, 'patient', id)).not.toBe(pseudonym(A, 'case', id).replace('cs-', 'pt-'));
    expect(pseudonym(A, 'patient', id)).toMatch(/^pt-[0-9a-f]{16}$/);
    expect(pseudonym(A, 'case', id)).toMatch(/^cs-[0-9a-f]{16}$/);
    expect(pseudonym(A, 'case', id)).not.toContain('3f2a8c1e');
  });
  it('refuses a short secret', () => {
    expect(() => pseudonym(Buffer.from('short'), 'case', 'x')).toThrow(/at least 16 bytes/);
  });
});

describe('codeBook (clinicians, referrers, practices as codes)', () => {
  it('numbers each id once, from 01, in HMAC order, the same for the same secret', () => {
    const ids = ['u-1', 'u-2', 'u-3', 'u-2'];
    const a = codeBook(A, 'clinician', 'C', ids);
    expect([...a.values()].sort()).toEqual(['C01', 'C02', 'C03']);
    expect(codeBook(A, 'clinician', 'C', [...ids].reverse())).toEqual(a);
    const many = codeBook(A, 'clinician', 'C', Array.from({ length: 120 }, (_, i) => `u${i}`));
    expect([...many.values()]).toContain('C120');
    expect([...many.values()]).toContain('C001');
  });
});

describe('ageBand (45 CFR 164.514(b)(2)(i)(C): ages over 89 in one band)', () => {
  it.each([
    [0, 5, '0-4'],
    [44, 5, '40-44'],
    [45, 5, '45-49'],
    [89, 5, '85-89'],
    [90, 5, '90+'],
    [104, 5, '90+'],
    [44, 10, '40-49'],
    [89, 10, '80-89'],
    [90, 10, '90+'],
    [-2, 5, '0-4'],
    [NaN, 5, 'not_recorded'],
  ] as const)('age %d, width %d → %s', (age, width, band) => {
    expect(ageBand(age, width)).toBe(band);
  });
});

describe('postalPrefix (45 CFR 164.514(b)(2)(i)(B))', () => {
  it.each([
    ['94110', '941'],
    ['94110-1234', '941'],
    ['941101234', '941'],
    [' 10001 ', '100'],
    ['03601', '000'],
    ['89012', '000'],
    ['SW1A 1AA', null],
    ['75008', '750'],
    ['1234', null],
    ['', null],
    [null, null],
  ] as const)('%s → %s', (code, prefix) => {
    expect(postalPrefix(code)).toBe(prefix);
  });
  it('writes 000 for every restricted three-digit area', () => {
    for (const z of RESTRICTED_ZIP3) expect(postalPrefix(`${z}45`)).toBe('000');
    expect(RESTRICTED_ZIP3).toHaveLength(17);
  });
});

describe('yearPeriod', () => {
  it.each([
    [2015, '2015-2019'],
    [2019, '2015-2019'],
    [2020, '2020-2024'],
  ])('%d → %s', (y, p) => expect(yearPeriod(y)).toBe(p));
});
