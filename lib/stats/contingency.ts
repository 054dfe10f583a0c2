import factorialln from '@stdlib/math-base-special-factorialln';
import { sum } from 'simple-statistics';
import { chiSquareUpperTail } from './distributions';

export interface ChiSquareResult {
  chiSquare: number;
  df: number;
  pValue: number;
}

function checkTable(table: readonly (readonly number[])[], what: string): void {
  if (!Array.isArray(table) || table.length < 2) throw new RangeError(`${what} needs a table of at least 2 rows`);
  const c = Array.isArray(table[0]) ? table[0].length : 0;
  if (c < 2) throw new RangeError(`${what} needs a table of at least 2 columns`);
  table.forEach((row, i) => {
    if (!Array.isArray(row) || row.length !== c) throw new RangeError(`${what}: row ${i} must have ${c} cells like row 0`);
    row.forEach((v, j) => {
      if (typeof v !== 'number' || !Number.isFinite(v) || v < 0) {
        throw new RangeError(`${what}: cell [${i}][${j}] must be a count >= 0, got ${String(v)}`);
      }
    });
  });
}

/**
 * Pearson's chi-square test of independence in an r x c table of counts,
 * without continuity correction (R: chisq.test(table, correct = FALSE)).
 * A row or column that sums to zero has no expected counts and is an error.
 */
export function chiSquareTest(table: readonly (readonly number[])[]): ChiSquareResult {
  checkTable(table, 'chiSquareTest');
  const r = table.length;
  const c = table[0].length;
  const rowSum = table.map((row) => sum([...row]));
  const colSum = Array.from({ length: c }, (_, j) => sum(table.map((row) => row[j])));
  const total = sum(rowSum);
  rowSum.forEach((v, i) => {
    if (v === 0) throw new RangeError(`chiSquareTest: row ${i} sums to zero; remove it`);
  });
  colSum.forEach((v, j) => {
    if (v === 0) throw new RangeError(`chiSquareTest: column ${j} sums to zero; remove it`);
  });
  let chi = 0;
  for (let i = 0; i < r; i++) {
    for (let j = 0; j < c; j++) {
      const e = (rowSum[i] * colSum[j]) / total;
      const dlt = table[i][j] - e;
      chi += (dlt * dlt) / e;
    }
  }
  const df = (r - 1) * (c - 1);
  return { chiSquare: chi, df, pValue: chiSquareUpperTail(chi, df) };
}

function lchoose(a: number, b: number): number {
  return factorialln(a) - factorialln(b) - factorialln(a - b);
}

/**
 * Fisher's exact test for a 2 x 2 table, two-sided, as R's fisher.test: the
 * sum of the hypergeometric probabilities of all tables with the same margins
 * that are no more likely than the one observed (with R's relative tolerance
 * 1 + 1e-7). Tables whose margins allow only one arrangement give p = 1.
 */
export function fisherExact2x2(table: readonly [readonly [number, number], readonly [number, number]]): { pValue: number } {
  checkTable(table as unknown as number[][], 'fisherExact2x2');
  if (table.length !== 2 || table[0].length !== 2) throw new RangeError('fisherExact2x2 needs a 2 x 2 table');
  for (const row of table) {
    for (const v of row) if (!Number.isInteger(v)) throw new RangeError(`fisherExact2x2: counts must be whole numbers, got ${v}`);
  }
  const [[a, b], [c, d]] = table;
  const m = a + c; // first column
  const nn = b + d; // second column
  const k = a + b; // first row
  const lo = Math.max(0, k - nn);
  const hi = Math.min(k, m);
  if (hi === lo) return { pValue: 1 };
  const logd = new Float64Array(hi - lo + 1);
  let max = -Infinity;
  for (let x = lo; x <= hi; x++) {
    const v = lchoose(m, x) + lchoose(nn, k - x);
    logd[x - lo] = v;
    if (v > max) max = v;
  }
  let total = 0;
  for (let i = 0; i < logd.length; i++) {
    logd[i] = Math.exp(logd[i] - max);
    total += logd[i];
  }
  const cut = (logd[a - lo] / total) * (1 + 1e-7);
  let pv = 0;
  for (let i = 0; i < logd.length; i++) {
    const pr = logd[i] / total;
    if (pr <= cut) pv += pr;
  }
  return { pValue: Math.min(1, pv) };
}
