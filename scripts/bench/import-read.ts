/**
 * Benchmark of the import's reading layer (issue 16, lib/import): a practice's own spreadsheet of
 * 10,000 cases with its own headers, DD/MM/YYYY text dates and decimal commas, as .xlsx (written by
 * exceljs, date cells and numbers) and as a semicolon CSV with a byte-order mark. Times, for each:
 * reading the bytes into a table, proposing the mapping (200 sample rows), suggesting the date
 * order over every date, and normalising every row to the case template's canonical form.
 * Pure: no database (the import service's dry run and commit are timed by registry.ts).
 *
 *   npm run bench -- import-read
 *   BENCH_IMPORT_ROWS=2000 npx tsx scripts/bench/import-read.ts
 *
 * Invented data from a seeded generator.
 */
import { performance } from 'node:perf_hooks';
import ExcelJS from 'exceljs';
import { CASE_TEMPLATE } from '../../lib/import/case-template';
import { suggestDateOrder } from '../../lib/import/dates';
import { suggestMapping } from '../../lib/import/mapping';
import { normalise } from '../../lib/import/normalise';
import { cellText, readTable, type Table } from '../../lib/import/read';
import { createRandom } from '../../lib/demo/random';

const ROWS = Number(process.env.BENCH_IMPORT_ROWS ?? 10_000);
const rng = createRandom(16);
const random = () => rng.next();
const HEADERS = ['Pt No', 'Forename', 'Surname', 'DOB', 'Gender', 'Recall OK', 'Contact by', 'Research', 'Consent', 'E-mail', 'Clinician', 'Tooth', 'Treatment', 'Started', 'Completed', 'Pulp', 'Apical', 'PAI', 'Lesion size (mm)', 'Canal 1', 'Canal 1 WL'];
const TEETH = [16, 26, 36, 46, 15, 25, 35, 45, 37, 47];
const pad = (n: number) => String(n).padStart(2, '0');
const dmy = (y: number, m: number, d: number) => `${pad(d)}/${pad(m)}/${y}`;

function rowValues(i: number, typed: boolean): (string | number | Date)[] {
  const y = 2015 + Math.floor(random() * 9);
  const m = 1 + Math.floor(random() * 12);
  const d = 1 + Math.floor(random() * 27);
  const date = (dd: number) => (typed ? new Date(Date.UTC(y, m - 1, dd)) : dmy(y, m, dd));
  const lesion = Math.round(random() * 50) / 10;
  return [
    `BR-${i}`, 'Ada', `Family${i}`, dmy(1940 + Math.floor(random() * 60), 1 + Math.floor(random() * 12), 1 + Math.floor(random() * 28)), random() < 0.5 ? 'F' : 'M',
    'Y', 'e-mail', 'N', date(d), `p${i}@patients.lamina-demo.invalid`, 'clinician@lamina-demo.invalid', TEETH[i % TEETH.length]!, random() < 0.8 ? 'RCT' : 'Retreatment',
    date(d), date(d + 1), 'Pulp necrosis', 'Asymptomatic apical periodontitis', 1 + Math.floor(random() * 5), typed ? lesion : String(lesion).replace('.', ','), 'MB',
    typed ? 20.5 : '20,5',
  ];
}

async function xlsxBytes(): Promise<Uint8Array> {
  const wb = new ExcelJS.Workbook();
  const ws = wb.addWorksheet('Cases');
  ws.addRow(HEADERS);
  for (let i = 0; i < ROWS; i++) ws.addRow(rowValues(i, true));
  return new Uint8Array(await wb.xlsx.writeBuffer());
}

function csvBytes(): Uint8Array {
  const lines = [HEADERS.join(';'), ...Array.from({ length: ROWS }, (_, i) => rowValues(i, false).join(';'))];
  return new Uint8Array([0xef, 0xbb, 0xbf, ...new TextEncoder().encode(lines.join('\r\n'))]);
}

async function time<T>(label: string, fn: () => Promise<T> | T): Promise<T> {
  const t0 = performance.now();
  const out = await fn();
  console.log(`  ${label.padEnd(34)} ${(performance.now() - t0).toFixed(0).padStart(6)} ms`);
  return out;
}

for (const [kind, make] of [
  ['.xlsx', xlsxBytes],
  ['CSV (semicolons, BOM)', async () => csvBytes()],
] as const) {
  const bytes = await make();
  console.log(`${kind}: ${ROWS.toLocaleString('en-GB')} cases, ${(bytes.length / 1024 / 1024).toFixed(1)} MB`);
  const table = await time('read the table', async () => {
    const r = await readTable(bytes);
    if (!r.ok) throw new Error(r.reason);
    return r.table as Table;
  });
  const proposals = await time('propose the mapping (200 rows)', () =>
    suggestMapping(table.headers, table.rows.slice(0, 200).map((r) => r.cells.map(cellText)), CASE_TEMPLATE),
  );
  const dates = table.rows.flatMap((r) => [3, 8, 13, 14].map((i) => r.cells[i]).filter((c): c is string => typeof c === 'string'));
  const order = await time('suggest the date order', () => suggestDateOrder(dates));
  const n = await time('normalise every row', () =>
    normalise(table, { columns: proposals.map((p) => p.target), dateOrder: order.order ?? 'dmy', decimalMark: ',', codes: { kind: { Retreatment: 'nonsurgical_retreatment' } } }, CASE_TEMPLATE),
  );
  console.log(`  → ${n.rows.length} canonical rows, ${n.problems.length} problems, date order ${order.order}\n`);
}
