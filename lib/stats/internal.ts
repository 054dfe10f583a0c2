/**
 * Shared internals for the survival functions: input checks and one-sort
 * grouping of observations by distinct time. Not exported from the index.
 */

export interface TimeGroups {
  /** distinct times, ascending */
  times: Float64Array;
  /** start[r]..start[r+1] are the positions in `order` of the observations at times[r] */
  start: Int32Array;
  /** observation indices grouped by distinct time, ascending */
  order: Int32Array;
  /** rank of each observation (index into times) */
  rank: Int32Array;
}

/** Sorted distinct values of a Float64Array (one native numeric sort). */
export function distinctSorted(values: Float64Array): Float64Array {
  const sorted = values.slice().sort();
  let m = 0;
  for (let i = 0; i < sorted.length; i++) {
    if (i === 0 || sorted[i] !== sorted[m - 1]) sorted[m++] = sorted[i];
  }
  return sorted.slice(0, m);
}

/**
 * Groups observations by distinct time: one sort of the times, a binary search
 * per observation for its rank and a counting sort by rank. O(n log n).
 */
export function groupByTime(values: Float64Array): TimeGroups {
  const n = values.length;
  const times = distinctSorted(values);
  const d = times.length;
  const rank = new Int32Array(n);
  const count = new Int32Array(d + 1);
  for (let i = 0; i < n; i++) {
    const v = values[i];
    let lo = 0;
    let hi = d - 1;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (times[mid] < v) lo = mid + 1;
      else hi = mid;
    }
    rank[i] = lo;
    count[lo + 1]++;
  }
  for (let r = 0; r < d; r++) count[r + 1] += count[r];
  const start = count.slice();
  const fill = count; // reuse as a write cursor
  const order = new Int32Array(n);
  for (let i = 0; i < n; i++) order[fill[rank[i]]++] = i;
  return { times, start, order, rank };
}

/** Checks one survival observation and throws a clear error on bad input. */
export function checkObservation(time: unknown, event: unknown, where: string): void {
  if (typeof time !== 'number' || !Number.isFinite(time) || time < 0) {
    throw new RangeError(`${where}: time must be a finite number >= 0, got ${String(time)}`);
  }
  if (typeof event !== 'boolean') {
    throw new TypeError(`${where}: event must be true (event seen) or false (censored), got ${String(event)}`);
  }
}

/** Solves A x = b for a small symmetric positive definite A (Cholesky). Returns null if A is not positive definite. */
export function choleskySolve(a: Float64Array, b: Float64Array, p: number, tol = 1e-12): Float64Array | null {
  const l = new Float64Array(p * p);
  let maxDiag = 0;
  for (let i = 0; i < p; i++) maxDiag = Math.max(maxDiag, Math.abs(a[i * p + i]));
  for (let j = 0; j < p; j++) {
    let s = a[j * p + j];
    for (let k = 0; k < j; k++) s -= l[j * p + k] * l[j * p + k];
    if (!(s > tol * Math.max(maxDiag, 1e-300))) return null;
    const ljj = Math.sqrt(s);
    l[j * p + j] = ljj;
    for (let i = j + 1; i < p; i++) {
      let t = a[i * p + j];
      for (let k = 0; k < j; k++) t -= l[i * p + k] * l[j * p + k];
      l[i * p + j] = t / ljj;
    }
  }
  const y = new Float64Array(p);
  for (let i = 0; i < p; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[i * p + k] * y[k];
    y[i] = s / l[i * p + i];
  }
  const x = new Float64Array(p);
  for (let i = p - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < p; k++) s -= l[k * p + i] * x[k];
    x[i] = s / l[i * p + i];
  }
  return x;
}

/** Inverse of a small symmetric positive definite matrix, or null if it is not positive definite. */
export function choleskyInverse(a: Float64Array, p: number, tol = 1e-12): Float64Array | null {
  const inv = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    const e = new Float64Array(p);
    e[j] = 1;
    const col = choleskySolve(a, e, p, tol);
    if (col === null) return null;
    for (let i = 0; i < p; i++) inv[i * p + j] = col[i];
  }
  return inv;
}
