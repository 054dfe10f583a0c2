import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { CSV_COLUMNS, parseCasesCsv, templateCsv } from '@/lib/registry/csv';

const template = Papa.parse<string[]>(templateCsv().trim()).data;
const HEADER = template[0]!;
const EXAMPLE: Record<string, string> = Object.fromEntries(HEADER.map((h, i) => [h, template[1]![i]!]));

/** A CSV with `columns` (default: all) and one line per row object (missing cells blank). */
function csv(rows: Record<string, string>[], columns: string[] = HEADER, delimiter = ','): string {
  return Papa.unparse({ fields: columns, data: rows.map((r) => columns.map((c) => r[c] ?? '')) }, { delimiter, newline: '\n' });
}
const row = (change: Record<string, string> = {}) => ({ ...EXAMPLE, ...change });
const secondCase = { tooth_fdi: '26', start_date: '2024-01-08', completion_date: '2024-01-22', definitive_restoration_date: '2024-03-05' };

describe('template', () => {
  it('has every column once and round-trips as one valid row', () => {
    expect(HEADER).toEqual(CSV_COLUMNS.map((c) => c.name));
    expect(new Set(HEADER).size).toBe(HEADER.length);
    const r = parseCasesCsv(templateCsv());
    expect(r.errors).toEqual([]);
    expect(r.rows).toHaveLength(1);
    const [only] = r.rows;
    expect(only!.line).toBe(2);
    expect(only!.registryNumber).toBe('EB-000123');
    expect(only!.operatorEmail).toBe('clinician@lamina-demo.invalid');
    expect(only!.patient).toMatchObject({ familyName: 'Pennymoss', recallContact: true, recallChannel: 'email' });
    expect(only!.referrer).toMatchObject({ name: 'Dr Tobin Ashgrove' });
    expect(only!.case).toMatchObject({ tooth: 36, kind: 'primary_treatment', paiScore: 4, lesionDiameterMm: 3.5, preopSymptoms: ['pain_on_biting', 'tender_to_percussion'] });
    expect(only!.case.canals).toEqual([
      { name: 'MB', workingLengthMm: 20.5, apicalSize: 30, fillToApexMm: 0.5 },
      { name: 'ML', workingLengthMm: 20, apicalSize: 30, fillToApexMm: 1 },
      { name: 'D', workingLengthMm: 21, apicalSize: 40, fillToApexMm: 1.5 },
    ]);
  });

  it('uses only invented, undeliverable addresses', () => {
    for (const v of Object.values(EXAMPLE)) if (v.includes('@')) expect(v).toMatch(/\.invalid$/);
  });
});

describe('header', () => {
  it.each<[string, string[], RegExp]>([
    ['misspelt column', HEADER.map((h) => (h === 'tooth_fdi' ? 'toth_fdi' : h)), /Unknown column “toth_fdi”; did you mean “tooth_fdi”\?/],
    ['missing required column', HEADER.filter((h) => h !== 'pai'), /The header lacks the column “pai”/],
    ['duplicate column', [...HEADER, 'kind'], /Column “kind” appears twice/],
    ['unnamed column', ['', ...HEADER], /Column 1 of the header has no name/],
    ['column nothing like ours', [...HEADER, 'favourite_colour'], /Unknown column “favourite_colour”\.$/],
  ])('%s is reported on line 1 and nothing is read', (_, columns, reason) => {
    const r = parseCasesCsv(csv([row()], columns));
    expect(r.rows).toEqual([]);
    expect(r.errors.length).toBeGreaterThan(0);
    expect(r.errors.every((e) => e.line === 1)).toBe(true);
    expect(r.errors.map((e) => e.reason).join('\n')).toMatch(reason);
  });

  it('accepts any column order, upper-case names, and drops optional columns', () => {
    const columns = HEADER.filter((h) => !/^canal[4-6]_|^referrer_|^root_end|^pulp_therapy|^capping/.test(h)).reverse();
    const text = csv([row()], columns).replace(/^[^\n]+/, (h) => h.toUpperCase());
    const r = parseCasesCsv(text);
    expect(r.errors).toEqual([]);
    expect(r.rows[0]!.referrer).toBeNull();
  });

  it('reports an empty file', () => {
    expect(parseCasesCsv('  \n').errors).toEqual([{ line: 1, reason: expect.stringMatching(/The file is empty/) }]);
  });
});

describe('file lines and formats', () => {
  it('counts physical lines across blank lines and quoted line breaks', () => {
    const text = [
      csv([row()]),
      '',
      csv([row({ ...secondCase, given_name: '' })]).split('\n')[1],
      // a quoted cell spanning two lines (line 5–6), then a bad row on line 7
      csv([row({ tooth_fdi: '46', start_date: '2024-02-01', completion_date: '2024-02-02', definitive_restoration_date: '', definitive_restoration: '', referrer_practice: 'Gullsett\nDental' })]).split('\n').slice(1).join('\n'),
      csv([row({ tooth_fdi: '19', start_date: '2024-03-01', completion_date: '2024-03-02', definitive_restoration_date: '' })]).split('\n')[1],
    ].join('\n');
    const r = parseCasesCsv(text);
    expect(r.rows.map((x) => x.line)).toEqual([2, 4, 5]);
    expect(r.errors).toEqual([{ line: 7, column: 'tooth_fdi', reason: expect.stringMatching(/19 is no tooth/) }]);
  });

  it('reads CRLF, a byte-order mark, semicolons and decimal commas (European spreadsheets)', () => {
    const text = '\uFEFF' + csv([row({ lesion_mm: '3,5', canal1_working_length_mm: '20,5' })], HEADER, ';').replace(/\n/g, '\r\n');
    const r = parseCasesCsv(text);
    expect(r.errors).toEqual([]);
    expect(r.rows[0]!.case.lesionDiameterMm).toBe(3.5);
    expect(r.rows[0]!.case.canals![0]!.workingLengthMm).toBe(20.5);
  });

  it('forgives case and spaces in codes and reads yes/no words', () => {
    const r = parseCasesCsv(csv([row({ kind: 'Primary Treatment', sex: 'FEMALE', recall_contact: 'Y', research_use: 'false', preop_symptoms: 'Pain on biting; swelling' })]));
    expect(r.errors).toEqual([]);
    expect(r.rows[0]!.case.kind).toBe('primary_treatment');
    expect(r.rows[0]!.patient!.researchUse).toBe(false);
    expect(r.rows[0]!.case.preopSymptoms).toEqual(['pain_on_biting', 'swelling']);
  });

  it('reports a row with more cells than the header', () => {
    const text = csv([row()]) + ',extra';
    expect(parseCasesCsv(text).errors).toEqual([{ line: 2, reason: expect.stringMatching(/has \d+ cells but the header has \d+/) }]);
  });

  it('reports a broken quote at its line', () => {
    const text = csv([row()]) + '\n' + csv([row(secondCase)]).split('\n')[1]!.replace('Gullsett', '"Gullsett');
    const r = parseCasesCsv(text);
    expect(r.errors.some((e) => e.line === 3 && /cannot be read/.test(e.reason))).toBe(true);
  });
});

describe('row errors name the line, the column and the reason', () => {
  it.each<[string, Record<string, string>, string, RegExp]>([
    ['tooth that is no tooth', { tooth_fdi: '29' }, 'tooth_fdi', /29 is no tooth/],
    ['Universal number in the FDI column', { tooth_fdi: '3' }, 'tooth_fdi', /If 3 is a Universal number, the FDI tooth is 16/],
    ['spreadsheet date', { start_date: '09/05/2023' }, 'start_date', /looks like a spreadsheet date: write dates as YYYY-MM-DD/],
    ['impossible date', { completion_date: '2023-02-29' }, 'completion_date', /real date .*found “2023-02-29”/],
    ['number with its unit', { lesion_mm: '3.5 mm' }, 'lesion_mm', /without the unit/],
    ['not a number', { pai: 'four' }, 'pai', /“four” is not a number/],
    ['PAI out of range', { pai: '6' }, 'pai', /between 1 and 5 \(found “6”\)\.$/],
    ['not yes or no', { sinus_tract: 'maybe' }, 'sinus_tract', /write yes or no/],
    ['unknown kind', { kind: 'root canal' }, 'kind', /Choose the kind of treatment: primary_treatment/],
    ['unknown symptom', { preop_symptoms: 'pain_on_biting|toothache' }, 'preop_symptoms', /Choose symptom/],
    ['ISO size', { canal2_apical_size: '27' }, 'canal2_apical_size', /ISO 3630-1 size/],
    ['canal without a name', { canal3_name: '' }, 'canal3_name', /Name the canal/],
    ['working length', { canal1_working_length_mm: '205' }, 'canal1_working_length_mm', /between 8 and 35 mm/],
    ['fill beyond the apex without the complication', { canal1_fill_to_apex_mm: '-1' }, 'complications', /beyond the apex: tick/],
    ['operator e-mail', { operator_email: 'dr-solberg' }, 'operator_email', /is not an e-mail address/],
    ['operator missing', { operator_email: '' }, 'operator_email', /Enter the e-mail of the clinician/],
    ['registry number missing', { registry_number: '' }, 'registry_number', /Enter the registry number/],
    ['patient consent rule (another patient)', { registry_number: 'EB-000124', recall_channel: 'none' }, 'recall_channel', /Choose how to contact/],
    ['referrer e-mail', { referrer_email: 'nobody' }, 'referrer_email', /Enter a valid e-mail/],
    ['completion before start', { completion_date: '2023-05-01' }, 'completion_date', /before the start date/],
    ['retreatment of an untreated tooth', { kind: 'nonsurgical_retreatment' }, 'pulpal_diagnosis', /previously treated/],
    ['primary tooth', { tooth_fdi: '75' }, 'tooth_fdi', /primary \(baby\) tooth/],
  ])('%s', (_, change, column, reason) => {
    const text = csv([row(), row({ ...secondCase, ...change })]);
    const r = parseCasesCsv(text);
    const mine = r.errors.filter((e) => e.line === 3);
    expect(mine.map((e) => e.column)).toContain(column);
    expect(mine.find((e) => e.column === column)!.reason).toMatch(reason);
    expect(r.errors.filter((e) => e.line !== 3)).toEqual([]);
    expect(r.rows.map((x) => x.line)).toEqual([2]);
  });

  it('reports one error per bad cell, not a second one from the schema', () => {
    const r = parseCasesCsv(csv([row({ pai: 'four', lesion_mm: '3 mm' })]));
    expect(r.errors.map((e) => e.column)).toEqual(['pai', 'lesion_mm']);
  });

  it('accepts primary teeth when the practice does', () => {
    expect(parseCasesCsv(csv([row({ tooth_fdi: '75' })]), { allowPrimaryTeeth: true }).errors).toEqual([]);
  });

  it('ignores canal and fill columns for apical surgery', () => {
    const r = parseCasesCsv(csv([row({ kind: 'apical_surgery', pulpal_diagnosis: 'previously_treated', root_end_filling: 'calcium_silicate', canal1_apical_size: '27' })]));
    expect(r.errors).toEqual([]);
    expect(r.rows[0]!.case).not.toHaveProperty('canals');
  });
});

describe('patients by registry number', () => {
  it('rows of the same number are one patient; later rows may leave details blank or repeat them', () => {
    const blank = Object.fromEntries(['given_name', 'family_name', 'date_of_birth', 'sex', 'email', 'phone', 'postal_code', 'recall_contact', 'recall_channel', 'research_use', 'consent_date'].map((c) => [c, '']));
    const r = parseCasesCsv(csv([row(), row({ ...secondCase, ...blank }), row({ tooth_fdi: '46', start_date: '2024-05-01', completion_date: '2024-05-02', definitive_restoration_date: '', sex: 'Female' })]));
    expect(r.errors).toEqual([]);
    expect(r.rows).toHaveLength(3);
    expect(r.rows[1]!.patient).toBe(r.rows[0]!.patient);
    expect(r.rows[2]!.patient).toBe(r.rows[0]!.patient);
  });

  it('different details for the same number are an error on the later row', () => {
    const r = parseCasesCsv(csv([row(), row({ ...secondCase, family_name: 'Pennymos', date_of_birth: '1968-11-03' })]));
    expect(r.errors).toEqual([
      { line: 3, column: 'family_name', reason: expect.stringMatching(/“Pennymos” differs from line 2 for patient EB-000123/) },
      { line: 3, column: 'date_of_birth', reason: expect.stringMatching(/differs from line 2/) },
    ]);
  });

  it('a new patient without details anywhere is an error at their first row', () => {
    const bare = row({ registry_number: 'EB-9', given_name: '', family_name: '', date_of_birth: '', sex: '', email: '', phone: '', postal_code: '', recall_contact: '', recall_channel: '', research_use: '', consent_date: '' });
    const r = parseCasesCsv(csv([row(), bare]));
    expect(r.errors).toEqual([{ line: 3, column: 'given_name', reason: expect.stringMatching(/Patient EB-9 is new/) }]);
    expect(r.rows.map((x) => x.line)).toEqual([2]);
  });

  it('a known patient needs no details; their row carries patient null', () => {
    const bare = row({ registry_number: 'EB-9', given_name: '', family_name: '', date_of_birth: '', sex: '', email: '', phone: '', postal_code: '', recall_contact: '', recall_channel: '', research_use: '', consent_date: '' });
    const r = parseCasesCsv(csv([bare]), { knownRegistryNumbers: ['EB-9'] });
    expect(r.errors).toEqual([]);
    expect(r.rows[0]!.patient).toBeNull();
  });

  it('invalid details fail every row of that patient', () => {
    const r = parseCasesCsv(csv([row({ date_of_birth: '1968-13-02' }), row({ ...secondCase, date_of_birth: '1968-13-02' })]));
    expect(r.errors.map((e) => [e.line, e.column])).toEqual([
      [2, 'date_of_birth'],
      [3, 'registry_number'],
    ]);
    expect(r.errors[1]!.reason).toMatch(/details of patient EB-000123 on line 2 are invalid/);
    expect(r.rows).toEqual([]);
  });

  it('the same case twice is reported with the first line', () => {
    const r = parseCasesCsv(csv([row(), row()]));
    expect(r.errors).toEqual([{ line: 3, reason: expect.stringMatching(/same case .* is on line 2 already/) }]);
  });
});

describe('large files', () => {
  it('reads 10,000 rows of 250 patients and reports a bad row deep in the file', () => {
    const rows: Record<string, string>[] = [];
    for (let i = 0; i < 10_000; i++) {
      const patient = i % 250;
      const day = String(1 + (i % 28)).padStart(2, '0');
      const month = String(1 + (Math.floor(i / 28) % 12)).padStart(2, '0');
      const year = 2010 + Math.floor(i / 336);
      rows.push(row({ registry_number: `EB-${patient}`, start_date: `${year}-${month}-${day}`, completion_date: `${year}-${month}-${day}`, definitive_restoration_date: '' , definitive_restoration: '' }));
    }
    rows[9_876] = { ...rows[9_876]!, pai: '7' };
    const r = parseCasesCsv(csv(rows));
    expect(r.errors).toEqual([{ line: 9_878, column: 'pai', reason: expect.stringMatching(/between 1 and 5/) }]);
    expect(r.rows).toHaveLength(9_999);
    expect(new Set(r.rows.map((x) => x.patient)).size).toBe(250);
  });
});
