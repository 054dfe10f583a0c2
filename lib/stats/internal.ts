/**
 * Shared internals for the survival functions: input checks and one-sort
 * grouping of observations by distinct time. Not exported from the index.
 */

export interface TimeGroups {
  /** distinct times, ascending */
  times: Float64Array;
  /** start[r]..start[r+1] are the positions (in sorted order) of the observations at times[r] */
  start: Int32Array;
  /** the payload of each observation, in ascending time order (stable) */
  payload: Int32Array;
}

/** Below this many keys a comparison sort is used. */
const SMALL_SORT = 2048;

const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;

/**
 * Stable LSD radix sort of non-negative doubles (their IEEE-754 bit patterns
 * order like unsigned integers), 16 bits per pass, four passes at most (the
 * digit histograms are counted in one read); a pass whose digit is the same for
 * every key is skipped. O(n). Optionally carries
 * an Int32 payload along. Keys must be finite and >= 0 (checked by callers);
 * -0 is folded to +0.
 */
export function radixSort(
  values: Float64Array,
  payload?: Int32Array,
  inPlace = false,
): { keys: Float64Array; payload: Int32Array | undefined } {
  const n = values.length;
  // inPlace: the caller gives up `values` and `payload` (saves two copies)
  let keys: Float64Array = inPlace ? values : new Float64Array(n);
  for (let i = 0; i < n; i++) keys[i] = values[i] + 0;
  let pay: Int32Array | undefined = payload ? (inPlace ? payload : payload.slice()) : undefined;
  if (n < 2) return { keys, payload: pay };
  if (n < SMALL_SORT) {
    // small inputs: a comparison sort is cheaper than the radix histograms
    if (!pay) return { keys: keys.sort(), payload: undefined };
    const idx = Array.from({ length: n }, (_, i) => i);
    const k0 = keys;
    idx.sort((a, b) => k0[a] - k0[b] || a - b);
    const outKeys = new Float64Array(n);
    const outPay = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      outKeys[i] = k0[idx[i]];
      outPay[i] = pay[idx[i]];
    }
    return { keys: outKeys, payload: outPay };
  }
  let keys2: Float64Array = new Float64Array(n);
  let pay2: Int32Array | undefined = pay ? new Int32Array(n) : undefined;
  // all four 16-bit digit histograms in one read of the keys
  const hist = new Int32Array(4 * 65536);
  countDigits(keys, hist);
  for (let pass = 0; pass < 4; pass++) {
    const word = LITTLE_ENDIAN ? pass >> 1 : 1 - (pass >> 1);
    const shift = (pass & 1) * 16;
    const u32 = new Uint32Array(keys.buffer, keys.byteOffset, 2 * n);
    const count = hist.subarray(pass * 65536, (pass + 1) * 65536);
    const d0 = (u32[word] >>> shift) & 0xffff;
    if (count[d0] === n) continue; // every key has the same digit: nothing to do
    let sum = 0;
    for (let d = 0; d < 65536; d++) {
      const c = count[d];
      count[d] = sum;
      sum += c;
    }
    if (pay && pay2) {
      for (let i = 0; i < n; i++) {
        const pos = count[(u32[2 * i + word] >>> shift) & 0xffff]++;
        keys2[pos] = keys[i];
        pay2[pos] = pay[i];
      }
      const tp = pay;
      pay = pay2;
      pay2 = tp;
    } else {
      for (let i = 0; i < n; i++) keys2[count[(u32[2 * i + word] >>> shift) & 0xffff]++] = keys[i];
    }
    const tk = keys;
    keys = keys2;
    keys2 = tk;
  }
  return { keys, payload: pay };
}

/** All four 16-bit digit histograms of the keys' bit patterns, counted in one read (hist: 4 × 65536, zeroed). */
function countDigits(keys: Float64Array, hist: Int32Array): void {
  const n = keys.length;
  const u32 = new Uint32Array(keys.buffer, keys.byteOffset, 2 * n);
  const lo = LITTLE_ENDIAN ? 0 : 1;
  const hi = 1 - lo;
  for (let i = 0; i < n; i++) {
    const a = u32[2 * i + lo];
    const b = u32[2 * i + hi];
    hist[a & 0xffff]++;
    hist[65536 + (a >>> 16)]++;
    hist[131072 + (b & 0xffff)]++;
    hist[196608 + (b >>> 16)]++;
  }
}

/** Length of the digit-histogram buffer {@link radixSortInPlace} needs (two 16-bit digits). */
export const IN_PLACE_HIST_LENGTH = 2 * 65536;

/**
 * Keys-only sort of `keys` in place, in ascending order, with the caller's
 * scratch buffer (length >= keys.length) and digit histograms (length
 * IN_PLACE_HIST_LENGTH; zeroed here), so that several sorts in one call share
 * them. The keys must be finite, >= 0 and free of -0 (the callers fold -0 to
 * +0 as they read the input, `t + 0`).
 *
 * Two LSD radix passes order the keys by the high 32 bits of their bit
 * patterns (sign, exponent and the top 20 mantissa bits). Keys that differ
 * only in the low 32 bits lie within a relative 2^-20 of each other, so they
 * are rare in survival times (days, or hundredths of a day, over decades
 * differ in the high word); one linear check then finds any run of equal high
 * words left out of order and sorts just that run with the built-in typed-array
 * sort. O(n) for such data, O(n log n) at worst.
 */
export function radixSortInPlace(keys: Float64Array, scratch: Float64Array, hist: Int32Array): void {
  const n = keys.length;
  if (n < 2) return;
  if (n < SMALL_SORT) {
    keys.sort();
    return;
  }
  const hiWord = LITTLE_ENDIAN ? 1 : 0;
  hist.fill(0, 0, IN_PLACE_HIST_LENGTH);
  {
    const u32 = new Uint32Array(keys.buffer, keys.byteOffset, 2 * n);
    for (let i = 0; i < n; i++) {
      const h = u32[2 * i + hiWord];
      hist[h & 0xffff]++;
      hist[65536 + (h >>> 16)]++;
    }
  }
  let src: Float64Array = keys;
  let dst: Float64Array = scratch.subarray(0, n);
  for (let pass = 0; pass < 2; pass++) {
    const shift = pass * 16;
    const u32 = new Uint32Array(src.buffer, src.byteOffset, 2 * n);
    const base = pass * 65536;
    if (hist[base + ((u32[hiWord] >>> shift) & 0xffff)] === n) continue; // one digit for every key
    let sum = 0;
    for (let d = base; d < base + 65536; d++) {
      const c = hist[d];
      hist[d] = sum;
      sum += c;
    }
    for (let i = 0; i < n; i++) dst[hist[base + ((u32[2 * i + hiWord] >>> shift) & 0xffff)]++] = src[i];
    const t = src;
    src = dst;
    dst = t;
  }
  if (src !== keys) keys.set(src);
  // keys are now ordered by their high words; put any run of equal high words in order
  const u32 = new Uint32Array(keys.buffer, keys.byteOffset, 2 * n);
  for (let i = 1; i < n; i++) {
    if (keys[i] < keys[i - 1]) {
      const h = u32[2 * i + hiWord];
      let a = i - 1;
      while (a > 0 && u32[2 * (a - 1) + hiWord] === h) a--;
      let b = i + 1;
      while (b < n && u32[2 * b + hiWord] === h) b++;
      keys.subarray(a, b).sort();
      i = b - 1;
    }
  }
}

/**
 * Groups observations by distinct time with one radix sort, carrying an Int32
 * payload per observation (an index, or a small code such as group and event).
 */
export function groupByTime(values: Float64Array, payload: Int32Array, inPlace = false): TimeGroups {
  const n = values.length;
  const sorted = radixSort(values, payload, inPlace);
  const keys = sorted.keys;
  let d = 0;
  const times = new Float64Array(n);
  const start = new Int32Array(n + 1);
  for (let i = 0; i < n; i++) {
    if (i === 0 || keys[i] !== keys[i - 1]) {
      times[d] = keys[i];
      start[d] = i;
      d++;
    }
  }
  start[d] = n;
  return { times: times.slice(0, d), start: start.slice(0, d + 1), payload: sorted.payload as Int32Array };
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

export interface RowGroups {
  /** number of groups */
  size: number;
  /** the group of each row, numbered 0..size-1 in order of first appearance */
  group: Int32Array;
  /** a row of each group (its first) */
  first: Int32Array;
  /** how many rows each group has */
  count: Float64Array;
}

/**
 * Rows of a row-major matrix (n rows of k numbers) grouped by equal values — the same bits, and
 * the same `label` when one is given (an outcome 0/1) — in one pass with a hash table (open
 * addressing, a table of at least twice n slots). The models' covariates are mostly factor levels,
 * so 100,000 rows have a few hundred patterns and every sum over rows can be taken over the groups
 * (each times its count). Two rows whose values are equal but not bit for bit (0 and -0) fall in
 * two groups: still correct sums, one group more.
 */
export function groupEqualRows(x: Float64Array, n: number, k: number, label?: Uint8Array): RowGroups {
  const words = new Uint32Array(x.buffer, x.byteOffset, n * k * 2);
  const w = 2 * k;
  let slots = 1024;
  while (slots < 2 * n) slots *= 2;
  const mask = slots - 1;
  const table = new Int32Array(slots).fill(-1);
  const group = new Int32Array(n);
  const first = new Int32Array(n);
  const count = new Float64Array(n);
  let size = 0;
  for (let i = 0; i < n; i++) {
    const o = i * w;
    let h = label ? label[i] + 1 : 0;
    for (let j = 0; j < w; j++) h = Math.imul(h ^ words[o + j], 0x9e3779b1) ^ (h >>> 15);
    h ^= h >>> 16;
    let slot = h & mask;
    for (;;) {
      const g = table[slot];
      if (g === -1) {
        table[slot] = size;
        first[size] = i;
        count[size] = 1;
        group[i] = size++;
        break;
      }
      const f = first[g] * w;
      let same = !label || label[first[g]] === label[i];
      for (let j = 0; j < w && same; j++) same = words[f + j] === words[o + j];
      if (same) {
        count[g] += 1;
        group[i] = g;
        break;
      }
      slot = (slot + 1) & mask;
    }
  }
  return { size, group, first: first.slice(0, size), count: count.slice(0, size) };
}
