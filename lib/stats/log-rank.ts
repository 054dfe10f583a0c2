import { chiSquareUpperTail } from './distributions';
import { IN_PLACE_HIST_LENGTH, checkObservation, radixSortInPlace } from './internal';
import type { SurvivalObservation } from './kaplan-meier';

/** An observation for logRank; with `stratum` on every observation the test is stratified (survdiff's strata()). */
export interface LogRankObservation extends SurvivalObservation {
  stratum?: string | number;
}

export interface LogRankResult {
  chiSquare: number;
  df: number;
  pValue: number;
  observed: Record<string, number>;
  expected: Record<string, number>;
}

/** Solves V x = b by Gaussian elimination with partial pivoting; null if V is singular. */
function solveDense(v: Float64Array, b: Float64Array, m: number): Float64Array | null {
  const a = v.slice();
  const x = b.slice();
  let scale = 0;
  for (let i = 0; i < m * m; i++) scale = Math.max(scale, Math.abs(a[i]));
  for (let c = 0; c < m; c++) {
    let piv = c;
    for (let r = c + 1; r < m; r++) if (Math.abs(a[r * m + c]) > Math.abs(a[piv * m + c])) piv = r;
    if (!(Math.abs(a[piv * m + c]) > 1e-12 * scale)) return null;
    if (piv !== c) {
      for (let k = 0; k < m; k++) {
        const t = a[c * m + k];
        a[c * m + k] = a[piv * m + k];
        a[piv * m + k] = t;
      }
      const t = x[c];
      x[c] = x[piv];
      x[piv] = t;
    }
    for (let r = c + 1; r < m; r++) {
      const f = a[r * m + c] / a[c * m + c];
      if (f === 0) continue;
      for (let k = c; k < m; k++) a[r * m + k] -= f * a[c * m + k];
      x[r] -= f * x[c];
    }
  }
  for (let r = m - 1; r >= 0; r--) {
    let s = x[r];
    for (let k = r + 1; k < m; k++) s -= a[r * m + k] * x[k];
    x[r] = s / a[r * m + r];
  }
  return x;
}

/**
 * Reads one group's observations into its slice of `all`, which starts at
 * `offset`: event times from the front, censoring times from the back.
 * Returns the end of the event times. Throws a clear error on bad input.
 */
function readGroup(list: readonly LogRankObservation[], name: string, all: Float64Array, offset: number, withinStratum: boolean): number {
  let ne = offset;
  let back = offset + list.length;
  for (let i = 0; i < list.length; i++) {
    const o = list[i];
    if (o === null || typeof o !== 'object') throw new TypeError(`group "${name}", observation ${i}: expected { time, event }`);
    if (!withinStratum && o.stratum !== undefined) throw STRATIFIED;
    const t = o.time;
    const e = o.event;
    if (typeof t !== 'number' || !(t >= 0) || t === Infinity || (e !== true && e !== false)) {
      checkObservation(t, e, `group "${name}", observation ${i}`);
    }
    // + 0 folds -0 to +0 (the radix sort orders bit patterns)
    if (e) all[ne++] = t + 0;
    else all[--back] = t + 0;
  }
  return ne;
}

interface Sweep {
  observed: Float64Array;
  expected: Float64Array;
  /** G x G hypergeometric covariance, full (mirrored) */
  variance: Float64Array;
}

/**
 * The sweep over the distinct event times, latest first (a G-way merge of the
 * event lists); at each one every group's censoring pointer is moved past the
 * censorings at or after it (censored at an event time: at risk then), so
 * atRisk[g] counts group g's observations with time >= t. `all` holds each
 * class's sorted times end to end (class 2g: group g's events, 2g + 1: its
 * censorings), `lo[c]` the first index of class c and `ptr[c]` its last; `ptr`
 * is used up. A function of its own so that the JIT optimises this loop on its
 * own feedback, apart from the set-up and the result.
 */
function sweep(all: Float64Array, lo: Int32Array, ptr: Int32Array, G: number): Sweep {
  // head[g]: the latest unswept event time of group g, -Infinity when exhausted
  const head = new Float64Array(G);
  for (let g = 0; g < G; g++) head[g] = ptr[2 * g] >= lo[2 * g] ? all[ptr[2 * g]] : -Infinity;
  const atRisk = new Float64Array(G);
  const dead = new Float64Array(G);
  const observed = new Float64Array(G);
  const expected = new Float64Array(G);
  const variance = new Float64Array(G * G);
  const share = new Float64Array(G);
  let nTotal = 0;
  for (;;) {
    let t = -Infinity;
    for (let g = 0; g < G; g++) if (head[g] > t) t = head[g];
    if (t === -Infinity) break;
    let dTotal = 0;
    for (let g = 0; g < G; g++) {
      // censorings of group g at or after t
      const cc = 2 * g + 1;
      let kc = ptr[cc];
      const k0c = kc;
      const firstC = lo[cc];
      while (kc >= firstC && all[kc] >= t) kc--;
      ptr[cc] = kc;
      let cnt = k0c - kc;
      if (head[g] === t) {
        const ce = 2 * g;
        let k = ptr[ce];
        const k0 = k;
        const first = lo[ce];
        while (k >= first && all[k] === t) k--;
        ptr[ce] = k;
        head[g] = k >= first ? all[k] : -Infinity;
        const d = k0 - k;
        dead[g] = d;
        dTotal += d;
        cnt += d;
      } else {
        dead[g] = 0;
      }
      atRisk[g] += cnt;
      nTotal += cnt;
    }
    const rate = dTotal / nTotal;
    for (let g = 0; g < G; g++) {
      expected[g] += rate * atRisk[g];
      observed[g] += dead[g];
    }
    if (nTotal > 1 && dTotal < nTotal) {
      // hypergeometric covariance, upper triangle (mirrored after the sweep)
      const w = (dTotal * (nTotal - dTotal)) / (nTotal - 1);
      for (let g = 0; g < G; g++) share[g] = atRisk[g] / nTotal;
      for (let g = 0; g < G; g++) {
        const pg = share[g];
        if (pg === 0) continue;
        const wp = w * pg;
        variance[g * G + g] += wp * (1 - pg);
        for (let h = g + 1; h < G; h++) variance[g * G + h] -= wp * share[h];
      }
    }
  }
  for (let g = 0; g < G; g++) for (let h = g + 1; h < G; h++) variance[h * G + g] = variance[g * G + h];
  return { observed, expected, variance };
}

/** Thrown by readGroup when an observation carries a stratum, to switch to the stratified test. */
const STRATIFIED = new Error('stratified');

/**
 * Observed, expected and the variance matrix over the lists (one per group, n observations in
 * all), by the sorts and the sweep below. `withinStratum`: the lists are one stratum's, whose
 * observations carry their stratum.
 */
function sums(lists: readonly (readonly LogRankObservation[])[], names: readonly string[], n: number, withinStratum: boolean): Sweep {
  const G = lists.length;
  // Each group's event times and censoring times, sorted separately (keys-only
  // radix sorts, n keys in all); the sweep then walks the 2G sorted lists
  // backwards from the latest time, like a merge.
  // Class c = 2g (events of group g) or 2g + 1 (censorings of group g); all
  // classes' sorted times are laid end to end in one array.
  const C = 2 * G;
  const all = new Float64Array(n);
  const lo = new Int32Array(C); // first index of class c in `all`
  const ptr = new Int32Array(C); // current (latest unswept) index of class c
  let largest = 0;
  for (let g = 0; g < G; g++) largest = Math.max(largest, lists[g].length);
  // one scratch buffer and one histogram for all 2G in-place sorts
  const scratch = new Float64Array(largest);
  const hist = new Int32Array(IN_PLACE_HIST_LENGTH);
  let offset = 0;
  for (let g = 0; g < G; g++) {
    const list = lists[g];
    const m = list.length;
    const ne = readGroup(list, names[g], all, offset, withinStratum);
    radixSortInPlace(all.subarray(offset, ne), scratch, hist);
    radixSortInPlace(all.subarray(ne, offset + m), scratch, hist);
    lo[2 * g] = offset;
    ptr[2 * g] = ne - 1;
    lo[2 * g + 1] = ne;
    ptr[2 * g + 1] = offset + m - 1;
    offset += m;
  }
  return sweep(all, lo, ptr, G);
}

/**
 * The stratified test (survdiff(Surv(time, status) ~ group + strata(s))): observed, expected
 * and variance summed over the strata, each stratum with its own risk sets.
 */
function stratifiedSums(groups: Readonly<Record<string, readonly LogRankObservation[]>>, names: readonly string[]): Sweep {
  const G = names.length;
  const strata = new Map<string | number, LogRankObservation[][]>();
  for (let g = 0; g < G; g++) {
    const list = groups[names[g]];
    for (let i = 0; i < list.length; i++) {
      const o = list[i];
      const st = o?.stratum;
      if (typeof st !== 'string' && !(typeof st === 'number' && Number.isFinite(st))) {
        throw new TypeError(`group "${names[g]}", observation ${i}: stratum must be a string or a finite number on every observation when any has one, got ${String(st)}`);
      }
      let lists = strata.get(st);
      if (lists === undefined) strata.set(st, (lists = Array.from({ length: G }, () => [])));
      lists[g].push(o);
    }
  }
  const observed = new Float64Array(G);
  const expected = new Float64Array(G);
  const variance = new Float64Array(G * G);
  for (const lists of strata.values()) {
    let m = 0;
    for (const l of lists) m += l.length;
    const part = sums(lists, names, m, true);
    for (let g = 0; g < G; g++) {
      observed[g] += part.observed[g];
      expected[g] += part.expected[g];
    }
    for (let k = 0; k < G * G; k++) variance[k] += part.variance[k];
  }
  return { observed, expected, variance };
}

/**
 * Log-rank (Mantel–Haenszel) test of equal survival across groups, as R's
 * survival::survdiff with rho = 0: observed and expected events per group,
 * the hypergeometric variance matrix, and chi-square = (O - E)' V^- (O - E)
 * over the groups with expected > 0, dropping one (df = that count - 1).
 *
 * Each group's event and censoring times are radix-sorted (linear time), then
 * one reverse sweep over the distinct event times merges them: O(n + D * G^2)
 * for D distinct event times and G groups.
 *
 * When the observations carry `stratum` (all of them), the test is stratified as
 * survdiff(... + strata(s)): each stratum has its own risk sets, and observed,
 * expected and the variance matrix are summed over the strata before the
 * chi-square. (The unstratified path notices a stratum while it reads the
 * observations, so it costs it one property read per observation.)
 *
 * Defined results: groups with no observations are reported with 0 observed
 * and 0 expected and do not count towards df; with no events at all the
 * statistic is 0 with p = 1. Fewer than two groups with observations is an error.
 */
export function logRank(groups: Readonly<Record<string, readonly LogRankObservation[]>>): LogRankResult {
  if (groups === null || typeof groups !== 'object') throw new TypeError('logRank expects { groupName: observations[] }');
  const names = Object.keys(groups);
  const G = names.length;
  let n = 0;
  let nonEmpty = 0;
  for (const name of names) {
    const list = groups[name];
    if (!Array.isArray(list)) throw new TypeError(`group "${name}": expected an array of { time, event }`);
    n += list.length;
    if (list.length > 0) nonEmpty++;
  }
  if (nonEmpty < 2) {
    throw new RangeError(`logRank needs at least two groups with observations, got ${nonEmpty}`);
  }
  let result: Sweep;
  try {
    result = sums(names.map((name) => groups[name]), names, n, false);
  } catch (e) {
    if (e !== STRATIFIED) throw e;
    result = stratifiedSums(groups, names);
  }
  const { observed, expected, variance } = result;
  const included: number[] = [];
  for (let g = 0; g < G; g++) if (expected[g] > 0) included.push(g);
  const obsOut: Record<string, number> = {};
  const expOut: Record<string, number> = {};
  for (let g = 0; g < G; g++) {
    obsOut[names[g]] = observed[g];
    expOut[names[g]] = expected[g];
  }
  let totalEvents = 0;
  for (let g = 0; g < G; g++) totalEvents += observed[g];
  if (totalEvents === 0) {
    return { chiSquare: 0, df: nonEmpty - 1, pValue: 1, observed: obsOut, expected: expOut };
  }
  const df = included.length - 1;
  if (df < 1) return { chiSquare: 0, df: 0, pValue: 1, observed: obsOut, expected: expOut };
  const m = df;
  const sub = new Float64Array(m * m);
  const diff = new Float64Array(m);
  for (let a = 0; a < m; a++) {
    const ga = included[a + 1];
    diff[a] = observed[ga] - expected[ga];
    for (let b = 0; b < m; b++) sub[a * m + b] = variance[ga * G + included[b + 1]];
  }
  const sol = solveDense(sub, diff, m);
  if (sol === null) {
    throw new RangeError('logRank: the variance matrix is singular (a group contributes no variance); compare fewer groups');
  }
  let chi = 0;
  for (let a = 0; a < m; a++) chi += sol[a] * diff[a];
  if (chi < 0) chi = 0; // rounding at a zero statistic
  return { chiSquare: chi, df, pValue: chiSquareUpperTail(chi, df), observed: obsOut, expected: expOut };
}
