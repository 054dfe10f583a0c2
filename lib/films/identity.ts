/**
 * Does the patient named in a DICOM file look like the case's patient? Pure. Lamina keeps the
 * file's name and id only to answer this; a disagreement is a warning on the film (it may be
 * another patient's film filed on the wrong case), never a display of the other name.
 *
 * DICOM Person Name (PN) is "Family^Given^Middle^Prefix^Suffix" (DICOM PS3.5 §6.2.1). Names are
 * compared without case, accents, spaces or punctuation; the family name must match and the given
 * names must agree on their first letter (initials are common practice in imaging software). With
 * no name in the file, a patient id that differs from the registry number is a disagreement.
 */
export interface CasePatient {
  givenName: string;
  familyName: string;
  registryNumber: string;
}

const norm = (s: string) =>
  s
    .normalize('NFKD')
    .replace(/[\u0300-\u036f]/g, '')
    .toUpperCase()
    .replace(/[^A-Z0-9]/g, '');

export function dicomPatientMismatch(patient: CasePatient, dicomName: string | null, dicomId: string | null): boolean {
  const name = dicomName?.trim() ?? '';
  if (name) {
    const [family = '', given = ''] = name.split('^');
    const f = norm(family);
    const g = norm(given);
    if (!f) return false;
    if (f !== norm(patient.familyName)) {
      // "Given Family" written in the family component (no carets) still matches.
      return !(name.indexOf('^') < 0 && norm(name) === norm(`${patient.givenName}${patient.familyName}`));
    }
    return Boolean(g) && g[0] !== norm(patient.givenName)[0];
  }
  const id = dicomId?.trim() ?? '';
  return Boolean(id) && norm(id) !== norm(patient.registryNumber);
}
