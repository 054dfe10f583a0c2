import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import { CASE_TEMPLATE } from '@/lib/import/case-template';
import { suggestCodes, suggestMapping } from '@/lib/import/mapping';
import { normalise } from '@/lib/import/normalise';
import { cellText, detectFormat, readTable, type Table } from '@/lib/import/read';
import type { TemplateColumn } from '@/lib/import/template';
import { CSV_COLUMNS, parseCaseRecords } from '@/lib/registry/csv';

const bytes = (text: string, bom = false) => new Uint8Array([...(bom ? [0xef, 0xbb, 0xbf] : []), ...new TextEncoder().encode(text)]);
const column = (key: string) => CASE_TEMPLATE.columns.find((c) => c.key === key) as TemplateColumn;

async function read(data: Uint8Array, sheet?: string): Promise<Table> {
  const r = await readTable(data, { sheet });
  if (!r.ok) throw new Error(r.reason);
  return r.table;
}

describe('reading CSV', () => {
  it('semicolons and a byte-order mark, with the lines of the file', async () => {
    const t = await read(bytes('Patient No;DOB;Lesion\r\n\r\nA-1;25/03/1970;3,5\r\nA-2;"01/02/1980";"2,0\r\nmm"\r\nA-3;;\r\n', true));
    expect(t.format).toBe('csv');
    expect(t.delimiter).toBe(';');
    expect(t.headers).toEqual(['Patient No', 'DOB', 'Lesion']);
    expect(t.rows.map((r) => r.line)).toEqual([3, 4, 6]);
    expect(t.rows[0]!.cells).toEqual(['A-1', '25/03/1970', '3,5']);
  });
  it('tabs, and UTF-16 text as spreadsheets save it', async () => {
    expect((await read(bytes('a\tb\n1\t2\n'))).delimiter).toBe('\t');
    const utf16 = new Uint8Array([0xff, 0xfe, ...Buffer.from('Naïve\tb\r\nx\ty\r\n', 'utf16le')]);
    const t = await read(utf16);
    expect(t.headers).toEqual(['Naïve', 'b']);
    expect(t.rows[0]!.cells).toEqual(['x', 'y']);
  });
  it('Windows-1252 text when the bytes are not UTF-8', async () => {
    const t = await read(new Uint8Array([0x4e, 0x61, 0xef, 0x76, 0x65, 0x0a, 0x78, 0x0a]));
    expect(t.headers).toEqual(['Naïve']);
  });
  it('tells the kind of file by its content', () => {
    expect(detectFormat(bytes('a,b\n'))).toEqual({ format: 'csv' });
    expect(detectFormat(new Uint8Array([0x50, 0x4b, 0x03, 0x04, 0]))).toEqual({ format: 'xlsx' });
    expect(detectFormat(new Uint8Array([0xd0, 0xcf, 0x11, 0xe0, 0xa1]))).toMatchObject({ format: null, reason: expect.stringMatching(/\.xls/) });
    expect(detectFormat(bytes('%PDF-1.7'))).toMatchObject({ format: null });
    expect(detectFormat(new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0]))).toMatchObject({ format: null });
  });
  it('refuses an empty file and a ZIP that is no workbook', async () => {
    expect(await readTable(new Uint8Array())).toMatchObject({ ok: false });
    expect(await readTable(bytes('\n\n'))).toMatchObject({ ok: false });
    expect(await readTable(new Uint8Array([0x50, 0x4b, 0x03, 0x04, 1, 2, 3, 4]))).toMatchObject({ ok: false, reason: expect.stringMatching(/not a readable \.xlsx/) });
  });
});

async function workbook(build: (wb: ExcelJS.Workbook) => void): Promise<Uint8Array> {
  const wb = new ExcelJS.Workbook();
  build(wb);
  return new Uint8Array(await wb.xlsx.writeBuffer());
}

describe('reading .xlsx', () => {
  it('dates, numbers, formula results and rich text from the first sheet; a chosen sheet; the sheet names', async () => {
    const data = await workbook((wb) => {
      const ws = wb.addWorksheet('Cases');
      ws.addRow(['Patient', 'Treated', 'Lesion', 'Double', 'Kind']);
      ws.addRow(['A-1', new Date(Date.UTC(2021, 2, 25)), 3.5, { formula: 'C2*2', result: 7 }, { richText: [{ text: 'R' }, { text: 'CT', font: { bold: true } }] }]);
      ws.addRow([]);
      ws.addRow(['A-2', new Date(Date.UTC(2022, 0, 1)), 0, null, { text: 'Retreatment', hyperlink: 'https://example.invalid' }]);
      const other = wb.addWorksheet('Notes');
      other.addRow(['note']);
      other.addRow(['invented']);
    });
    const t = await read(data);
    expect(t.format).toBe('xlsx');
    expect(t.sheets).toEqual(['Cases', 'Notes']);
    expect(t.sheet).toBe('Cases');
    expect(t.headers).toEqual(['Patient', 'Treated', 'Lesion', 'Double', 'Kind']);
    expect(t.rows.map((r) => r.line)).toEqual([2, 4]);
    expect(t.rows[0]!.cells).toEqual(['A-1', { date: '2021-03-25' }, 3.5, 7, 'RCT']);
    expect(t.rows[1]!.cells.map(cellText)).toEqual(['A-2', '2022-01-01', '0', '', 'Retreatment']);
    const notes = await read(data, 'Notes');
    expect(notes.headers).toEqual(['note']);
    expect(await readTable(data, { sheet: 'Nope' })).toMatchObject({ ok: false, sheets: ['Cases', 'Notes'] });
  });

  it('a 1904-system workbook: its date cells, and serial numbers in a date column', async () => {
    const data = await workbook((wb) => {
      wb.properties.date1904 = true;
      const ws = wb.addWorksheet('S');
      ws.addRow(['completion_date', 'start_date']);
      ws.addRow([new Date(Date.UTC(2020, 0, 1)), 43831 - 1462]);
    });
    const t = await read(data);
    expect(t.date1904).toBe(true);
    expect(t.rows[0]!.cells[0]).toEqual({ date: '2020-01-01' });
    const n = normalise(t, { columns: ['completion_date', 'start_date'], dateOrder: null, decimalMark: '.', codes: {} }, CASE_TEMPLATE);
    expect(n.problems).toEqual([]);
    expect(n.rows[0]!.values).toEqual({ start_date: '2020-01-01', completion_date: '2020-01-01' });
    // The same serial in the 1900 system is four years and a day later.
    const t1900 = { ...t, date1904: false };
    expect(normalise(t1900, { columns: [null, 'start_date'], dateOrder: null, decimalMark: '.', codes: {} }, CASE_TEMPLATE).rows[0]!.values.start_date).toBe('2015-12-31');
  });
});

describe('suggestMapping', () => {
  const headers = ['Patient No.', 'Surname', 'D.O.B.', 'Gender', 'Zahn', 'Treatment', 'Date completed', 'PAI score', 'Lesion size (mm)', 'Clinician', 'Notes', 'Kontakt'];
  const samples = [
    ['P-1', 'Quillfeather', '25/03/1970', 'F', '36', 'RCT', '02/05/2023', '4', '3,5', 'dr.a@lamina-demo.invalid', 'invented', 'x.y@patients.lamina-demo.invalid'],
    ['P-2', 'Brackenrow', '01/12/1981', 'M', '47', 'Retreat', '13/06/2023', '2', '0', 'dr.a@lamina-demo.invalid', '', 'z@patients.lamina-demo.invalid'],
  ];
  const proposals = suggestMapping(headers, samples, CASE_TEMPLATE);
  const target = (h: string) => proposals.find((p) => p.header === h)!.target;

  it.each([
    ['Patient No.', 'registry_number'],
    ['Surname', 'family_name'],
    ['D.O.B.', 'date_of_birth'],
    ['Gender', 'sex'],
    ['Treatment', 'kind'],
    ['Date completed', 'completion_date'],
    ['PAI score', 'pai'],
    ['Lesion size (mm)', 'lesion_mm'],
    ['Clinician', 'operator_email'],
  ])('by name: %s → %s', (header, key) => {
    expect(target(header)).toBe(key);
  });

  it('by values: a column of FDI tooth numbers', () => {
    expect(target('Zahn')).toBe('tooth_fdi');
    expect(proposals.find((p) => p.header === 'Zahn')!.why).toMatch(/FDI tooth numbers/);
  });

  it('leaves out what fits nothing, and e-mails that could be any of three columns', () => {
    expect(target('Notes')).toBeNull();
    expect(target('Kontakt')).toBeNull();
  });

  it('the template’s own headers map to themselves', () => {
    const own = suggestMapping(CSV_COLUMNS.map((c) => c.name), [], CASE_TEMPLATE);
    expect(own.map((p) => p.target)).toEqual(CSV_COLUMNS.map((c) => c.name));
  });

  it('never proposes one template column twice', () => {
    const twice = suggestMapping(['DOB', 'Date of birth'], [], CASE_TEMPLATE);
    expect(twice.filter((p) => p.target === 'date_of_birth')).toHaveLength(1);
  });

  it('values that plainly do not fit weigh against the name', () => {
    const p = suggestMapping(['Tooth'], [['upper left'], ['lower right']], CASE_TEMPLATE);
    expect(p[0]!.target).toBe('tooth_fdi'); // still by name (tooth is text) …
    const d = suggestMapping(['DOB'], [['yes'], ['no'], ['maybe']], CASE_TEMPLATE);
    expect(d[0]!.score).toBeLessThan(suggestMapping(['DOB'], [['01/02/1970']], CASE_TEMPLATE)[0]!.score);
  });
});

describe('suggestCodes', () => {
  it('kinds of treatment: synonyms exact, beginnings near, unknown none', () => {
    const s = suggestCodes(['RCT', 'RCT', 'Retreat', 'apicectomy', 'Primary root canal treatment', 'zzz', ''], column('kind'));
    expect(s).toEqual([
      { value: 'RCT', code: 'primary_treatment', match: 'exact', count: 2 },
      { value: 'apicectomy', code: 'apical_surgery', match: 'exact', count: 1 },
      { value: 'Primary root canal treatment', code: 'primary_treatment', match: 'exact', count: 1 },
      { value: 'Retreat', code: 'nonsurgical_retreatment', match: 'near', count: 1 },
      { value: 'zzz', code: null, match: 'none', count: 1 },
    ]);
  });
  it('M/F, yes/no, and several codes in one cell', () => {
    expect(suggestCodes(['M', 'F', 'Fem'], column('sex')).map((s) => [s.code, s.match])).toEqual([
      ['female', 'exact'],
      ['female', 'near'],
      ['male', 'exact'],
    ]);
    expect(suggestCodes(['Y', 'n', 'TRUE'], column('sinus_tract')).map((s) => s.code)).toEqual(['no', 'yes', 'yes']);
    expect(suggestCodes(['Perforation; Ledge'], column('complications')).map((s) => s.code)).toEqual(['ledge', 'perforation']);
  });
});

describe('normalise', () => {
  const table: Table = {
    format: 'csv',
    sheets: [],
    sheet: null,
    date1904: false,
    headerLine: 1,
    headers: ['No', 'Tooth', 'Done', 'Type', 'Lesion', 'Gender', 'Extra'],
    rows: [
      { line: 2, cells: ['P-1', '36', '02/05/2023', 'RCT', '3,5', 'M', 'x'] },
      { line: 3, cells: ['P-2', '47', '31/02/2023', 'Cleaning', '2,0', 'F', 'y'] },
      { line: 5, cells: ['P-3', 46, { date: '2023-06-01' }, 'Retreat', 1.25, '', ''] },
    ],
  };
  const base = { columns: ['registry_number', 'tooth_fdi', 'completion_date', 'kind', 'lesion_mm', 'sex', null], dateOrder: 'dmy' as const, decimalMark: ',' as const };

  it('canonical rows in the template’s forms, problems by line and column', () => {
    const n = normalise(table, { ...base, codes: { kind: { Retreat: 'nonsurgical_retreatment' } } }, CASE_TEMPLATE);
    expect(n.keys).toEqual(['registry_number', 'sex', 'tooth_fdi', 'kind', 'completion_date', 'lesion_mm']);
    expect(n.rows[0]).toEqual({
      line: 2,
      values: { registry_number: 'P-1', tooth_fdi: '36', completion_date: '2023-05-02', kind: 'primary_treatment', lesion_mm: '3.5', sex: 'male' },
    });
    expect(n.rows[2]!.values).toMatchObject({ tooth_fdi: '46', completion_date: '2023-06-01', kind: 'nonsurgical_retreatment', lesion_mm: '1.25', sex: '' });
    expect(n.problems.map((p) => [p.line, p.column, p.header, p.value, p.kind])).toEqual([
      [3, 'kind', 'Type', 'Cleaning', 'unmapped'],
      [3, 'completion_date', 'Done', '31/02/2023', 'impossible'],
    ]);
  });

  it('without a chosen date order, lists every ambiguous date', () => {
    const n = normalise(table, { ...base, dateOrder: null, codes: {} }, CASE_TEMPLATE);
    const dates = n.problems.filter((p) => p.column === 'completion_date');
    expect(dates.map((p) => [p.line, p.kind])).toEqual([
      [2, 'ambiguous'],
      [3, 'impossible'],
    ]);
    expect(dates[0]!.reason).toMatch(/could be 2 May or 5 February/);
  });

  it('refuses a template column chosen twice', () => {
    const n = normalise(table, { ...base, columns: ['registry_number', 'registry_number', null, null, null, null, null], codes: {} }, CASE_TEMPLATE);
    expect(n.problems[0]).toMatchObject({ line: 1, column: 'registry_number', kind: 'invalid' });
  });
});

describe('the case template descriptor', () => {
  it('has the CSV template’s columns in order, codes for every coded column', () => {
    expect(CASE_TEMPLATE.columns.map((c) => c.key)).toEqual(CSV_COLUMNS.map((c) => c.name));
    for (const c of CSV_COLUMNS) {
      const d = column(c.name);
      if (c.kind === 'code' || c.kind === 'codes' || c.kind === 'bool') expect(d.codes?.length, c.name).toBeGreaterThan(1);
      expect(d.required ?? false).toBe(c.required);
    }
  });

  it('a UK-style file mapped and normalised passes the case rules', async () => {
    const t = await read(
      bytes(
        'Pt No;First name;Surname;DOB;Sex;Recall OK;Contact by;Research;Consent;Clinician;Tooth;Treatment;Started;Completed;Pulp;Apical;PAI;Lesion;E-mail;Canal 1\r\n' +
          'UK-1;Ada;Fernwhistle;02/11/1968;F;Y;e-mail;N;09/05/2023;clinician@lamina-demo.invalid;36;RCT;09/05/2023;23/05/2023;Pulp necrosis;asymptomatic apical periodontitis;4;3,5;ada@patients.lamina-demo.invalid;MB\r\n',
        true,
      ),
    );
    const proposals = suggestMapping(t.headers, t.rows.map((r) => r.cells.map(cellText)), CASE_TEMPLATE);
    const columns = proposals.map((p) => p.target);
    expect(columns).toEqual([
      'registry_number', 'given_name', 'family_name', 'date_of_birth', 'sex', 'recall_contact', 'recall_channel', 'research_use', 'consent_date',
      'operator_email', 'tooth_fdi', 'kind', 'start_date', 'completion_date', 'pulpal_diagnosis', 'apical_diagnosis', 'pai', 'lesion_mm', 'email', 'canal1_name',
    ]);
    const n = normalise(t, { columns, dateOrder: 'dmy', decimalMark: ',', codes: {} }, CASE_TEMPLATE);
    expect(n.problems).toEqual([]);
    const parsed = parseCaseRecords(n.keys, n.rows.map((r) => ({ line: r.line, cells: n.keys.map((k) => r.values[k]!) })));
    expect(parsed.errors).toEqual([]);
    expect(parsed.rows[0]!.case).toMatchObject({ tooth: 36, kind: 'primary_treatment', completionDate: '2023-05-23', lesionDiameterMm: 3.5 });
  });
});
