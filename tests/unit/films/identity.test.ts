import { describe, expect, it } from 'vitest';
import { dicomPatientMismatch } from '@/lib/films/identity';

const wren = { givenName: 'Wren', familyName: 'Ashdown', registryNumber: 'T-0001' };

// DICOM PS3.5 §6.2.1 (PN: Family^Given^Middle^Prefix^Suffix); initials in the given name are common practice.
describe('DICOM patient against the case’s patient', () => {
  it.each([
    ['Ashdown^Wren', null, false],
    ['ASHDOWN^WREN^^^', null, false],
    ['Ashdown^W', null, false],
    ['ashdówn^wren', null, false],
    ['Ashdown', null, false],
    ['Wren Ashdown', null, false],
    ['Quill^Runa', null, true],
    ['Ashdown^Runa', null, true],
    ['Ashdowne^Wren', null, true],
    [null, 'T-0001', false],
    [null, 't0001', false],
    [null, 'X-99', true],
    [null, null, false],
    ['', '', false],
    ['Ashdown^Wren', 'X-99', false], // the name agrees: an imaging system's own id is no warning
  ])('%s / %s → mismatch %s', (name, id, expected) => {
    expect(dicomPatientMismatch(wren, name, id)).toBe(expected);
  });
});
