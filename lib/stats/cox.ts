import { twoSidedNormalP, zForLevel } from './distributions';
import { choleskyInverse, choleskySolve, groupByTime, groupEqualRows } from './internal';

export interface CoxRow {
  time: number;
  event: boolean;
  /** covariates, the same number for every row */
  x: number[];
  /**
   * cluster (e.g. patient id, for several teeth of one patient): when any row
   * has one, every row must, and the result adds robustSe (R's coxph(..., cluster = id))
   */
  cluster?: string | number;
}

export interface CoxOptions {
  /** handling of tied event times, default 'efron' (as R's coxph) */
  ties?: 'efron' | 'breslow';
}

export interface CoxResult {
  coef: number[];
  se: number[];
  /**
   * with clusters: the robust (sandwich) standard errors of R's coxph(..., cluster = id), from the
   * dfbeta residuals summed by cluster, no small-sample factor; the intervals and p-values then use them
   */
  robustSe?: number[];
  hazardRatio: number[];
  /** 95% Wald interval of the hazard ratio */
  lower: number[];
  upper: number[];
  /** two-sided Wald p-value of each coefficient */
  pValue: number[];
  /** log partial likelihood at the estimate */
  logLik: number;
  /** likelihood-ratio chi-square against the model with all coefficients 0 (df = number of covariates) */
  lrChiSquare: number;
}

/** R's coxph.control defaults. */
const EPS = 1e-9;
const MAX_ITER = 20;
const TOLER_INF = Math.sqrt(EPS);

interface Sorted {
  n: number;
  p: number;
  /** covariates in time order, row-major, centred and scaled */
  x: Float64Array;
  status: Uint8Array;
  /** start[r]..start[r+1]: rows (in sorted order) at distinct time r */
  start: Int32Array;
  D: number;
  scale: Float64Array;
  /** cluster index (0..G-1) of each row in time order, or null when the rows have no clusters */
  cluster: Int32Array | null;
  G: number;
}

interface Fit {
  loglik: number;
  u: Float64Array;
  imat: Float64Array;
  finite: boolean;
}

/** Rows with the same (centred, scaled) covariates: one risk score per pattern, and the information's x x' terms taken per pattern. */
interface Patterns {
  /** the pattern of each row (in time order) */
  of: Int32Array;
  /** number of patterns */
  P: number;
  /** covariates of each pattern, row-major P × p */
  x: Float64Array;
}

function patternsOf(s: Sorted): Patterns {
  const { n, p, x } = s;
  const g = groupEqualRows(x, n, p);
  const px = new Float64Array(g.size * p);
  for (let q = 0; q < g.size; q++) px.set(x.subarray(g.first[q] * p, g.first[q] * p + p), q * p);
  return { of: g.group, P: g.size, x: px };
}

/**
 * Log partial likelihood, score and information at beta. One reverse cumulative pass over the
 * distinct times accumulates the risk-set sums S0 and S1 (rows censored at an event time are in
 * its risk set) and gives the log-likelihood, the score and the information's -m m' terms. The
 * information's S2 terms are not accumulated row by row (p^2 per row): the S2 of the risk set at
 * time t enters with a factor c(t) (d/S0 for Breslow; the sum of 1/a0 over Efron's steps), so its
 * total is the sum over rows of w_i x_i x_i' times the factors of the times up to the row's own —
 * one forward pass of scalars — and with Efron the tied deaths' own D2 enters with the sum of
 * f/a0. Rows of one covariate pattern share x_i x_i', so that sum is one p x p term per pattern:
 * O(n p + patterns p^2) per iteration instead of O(n p^2). The same sums as before in another
 * order (R's coxph to 1e-6 in tests/reference).
 */
function evaluateGeneral(s: Sorted, pat: Patterns, beta: Float64Array, efron: boolean, risk: Float64Array, eta: Float64Array): Fit {
  const { p, x, status, start, D } = s;
  const { of, P, x: px } = pat;
  // risk and eta per pattern
  for (let q = 0; q < P; q++) {
    let e = 0;
    const o = q * p;
    for (let k = 0; k < p; k++) e += beta[k] * px[o + k];
    eta[q] = e;
    risk[q] = Math.exp(e);
  }
  const pp = p * p;
  const s1 = new Float64Array(p);
  const d1 = new Float64Array(p);
  const xs = new Float64Array(p);
  const a1 = new Float64Array(p);
  const u = new Float64Array(p);
  const imat = new Float64Array(pp);
  // per distinct time: the factor of the risk set's S2 and of the deaths' own D2 in the information
  const cS2 = new Float64Array(D);
  const cD2 = new Float64Array(D);
  let s0 = 0;
  let loglik = 0;
  for (let r = D - 1; r >= 0; r--) {
    let d = 0;
    let d0 = 0;
    let etaSum = 0;
    const from = start[r];
    const to = start[r + 1];
    for (let i = from; i < to; i++) {
      const q = of[i];
      const w = risk[q];
      const o = i * p;
      s0 += w;
      for (let k = 0; k < p; k++) s1[k] += w * x[o + k];
      if (status[i] === 1) {
        if (d === 0) {
          d0 = 0;
          d1.fill(0);
          xs.fill(0);
        }
        d++;
        etaSum += eta[q];
        d0 += w;
        for (let k = 0; k < p; k++) {
          xs[k] += x[o + k];
          d1[k] += w * x[o + k];
        }
      }
    }
    if (d === 0) continue;
    loglik += etaSum;
    for (let k = 0; k < p; k++) u[k] += xs[k];
    if (!efron || d === 1) {
      loglik -= d * Math.log(s0);
      cS2[r] = d / s0;
      for (let k = 0; k < p; k++) {
        const m1 = s1[k] / s0;
        u[k] -= d * m1;
        for (let l = 0; l <= k; l++) imat[k * p + l] -= d * m1 * (s1[l] / s0);
      }
    } else {
      for (let j = 0; j < d; j++) {
        const f = j / d;
        const a0 = s0 - f * d0;
        loglik -= Math.log(a0);
        cS2[r] += 1 / a0;
        cD2[r] += f / a0;
        for (let k = 0; k < p; k++) a1[k] = s1[k] - f * d1[k];
        for (let k = 0; k < p; k++) {
          const m1 = a1[k] / a0;
          u[k] -= m1;
          for (let l = 0; l <= k; l++) imat[k * p + l] -= m1 * (a1[l] / a0);
        }
      }
    }
  }
  // sum over rows of w_i (C(t_i) - [death] cD2(t_i)) x_i x_i', C the running sum of cS2 up to t_i; per pattern
  const weight = new Float64Array(P);
  let C = 0;
  for (let r = 0; r < D; r++) {
    C += cS2[r];
    if (C === 0) continue;
    const deathFactor = C - cD2[r];
    for (let i = start[r]; i < start[r + 1]; i++) weight[of[i]] += status[i] === 1 ? deathFactor : C;
  }
  for (let q = 0; q < P; q++) {
    const wq = weight[q] * risk[q];
    if (wq === 0) continue;
    const o = q * p;
    for (let k = 0; k < p; k++) {
      const wx = wq * px[o + k];
      for (let l = 0; l <= k; l++) imat[k * p + l] += wx * px[o + l];
    }
  }
  for (let k = 0; k < p; k++) for (let l = 0; l < k; l++) imat[l * p + k] = imat[k * p + l];
  let finite = Number.isFinite(loglik);
  for (let k = 0; k < p && finite; k++) finite = Number.isFinite(u[k]);
  for (let k = 0; k < pp && finite; k++) finite = Number.isFinite(imat[k]);
  return { loglik, u, imat, finite };
}

/**
 * The same computation as evaluate() for exactly two covariates, with the
 * risk-set sums held in locals (the common case, and the benchmarked one).
 */
function evaluate2(s: Sorted, beta: Float64Array, efron: boolean, risk: Float64Array): Fit {
  const { n, x, status, start, D } = s;
  const b0 = beta[0];
  const b1 = beta[1];
  for (let i = 0; i < n; i++) risk[i] = Math.exp(b0 * x[2 * i] + b1 * x[2 * i + 1]);
  let s0 = 0;
  let s1a = 0;
  let s1b = 0;
  let s2aa = 0;
  let s2ba = 0;
  let s2bb = 0;
  let loglik = 0;
  let ua = 0;
  let ub = 0;
  let iaa = 0;
  let iba = 0;
  let ibb = 0;
  for (let r = D - 1; r >= 0; r--) {
    let d = 0;
    let d0 = 0;
    let d1a = 0;
    let d1b = 0;
    let d2aa = 0;
    let d2ba = 0;
    let d2bb = 0;
    let etaSum = 0;
    let xsa = 0;
    let xsb = 0;
    const to = start[r + 1];
    for (let i = start[r]; i < to; i++) {
      const w = risk[i];
      const xa = x[2 * i];
      const xb = x[2 * i + 1];
      const wa = w * xa;
      const wb = w * xb;
      s0 += w;
      s1a += wa;
      s1b += wb;
      s2aa += wa * xa;
      s2ba += wb * xa;
      s2bb += wb * xb;
      if (status[i] === 1) {
        d++;
        etaSum += b0 * xa + b1 * xb;
        xsa += xa;
        xsb += xb;
        d0 += w;
        d1a += wa;
        d1b += wb;
        d2aa += wa * xa;
        d2ba += wb * xa;
        d2bb += wb * xb;
      }
    }
    if (d === 0) continue;
    loglik += etaSum;
    ua += xsa;
    ub += xsb;
    if (!efron || d === 1) {
      loglik -= d * Math.log(s0);
      const ma = s1a / s0;
      const mb = s1b / s0;
      ua -= d * ma;
      ub -= d * mb;
      iaa += d * (s2aa / s0 - ma * ma);
      iba += d * (s2ba / s0 - mb * ma);
      ibb += d * (s2bb / s0 - mb * mb);
    } else {
      for (let j = 0; j < d; j++) {
        const f = j / d;
        const a0 = s0 - f * d0;
        loglik -= Math.log(a0);
        const ma = (s1a - f * d1a) / a0;
        const mb = (s1b - f * d1b) / a0;
        ua -= ma;
        ub -= mb;
        iaa += (s2aa - f * d2aa) / a0 - ma * ma;
        iba += (s2ba - f * d2ba) / a0 - mb * ma;
        ibb += (s2bb - f * d2bb) / a0 - mb * mb;
      }
    }
  }
  const u = new Float64Array([ua, ub]);
  const imat = new Float64Array([iaa, iba, iba, ibb]);
  const finite = Number.isFinite(loglik) && Number.isFinite(ua) && Number.isFinite(ub) && Number.isFinite(iaa) && Number.isFinite(iba) && Number.isFinite(ibb);
  return { loglik, u, imat, finite };
}

function evaluate(s: Sorted, pat: Patterns | null, beta: Float64Array, efron: boolean, risk: Float64Array, eta: Float64Array): Fit {
  return pat === null ? evaluate2(s, beta, efron, risk) : evaluateGeneral(s, pat, beta, efron, risk, eta);
}

/**
 * The rows of a Cox model as columns (typed arrays), for callers that hold many rows: no object per
 * row. `coxPHColumns` fits them exactly as `coxPH` fits the same rows.
 */
export interface CoxColumns {
  /** follow-up time of each row, finite and >= 0 (not changed by the fit) */
  time: Float64Array;
  /** 1 when the row's event was seen, 0 when censored */
  event: Uint8Array;
  /** number of covariates */
  p: number;
  /** covariates, row-major: x[i * p + c] is covariate c of row i */
  x: Float64Array;
  /**
   * cluster of each row as an index 0..G-1 (numbered in order of first appearance, as `coxPH` numbers
   * its `cluster` values), or absent: with clusters the result adds robustSe
   */
  cluster?: Int32Array | null;
}

/** The rows checked and turned into columns (clusters numbered in order of first appearance). */
function rowsToColumns(rows: readonly CoxRow[]): CoxColumns {
  if (!Array.isArray(rows)) throw new TypeError('coxPH expects an array of { time, event, x }');
  const n = rows.length;
  if (n < 2) throw new RangeError(`coxPH needs at least two rows, got ${n}`);
  const first = rows[0];
  if (!first || !Array.isArray(first.x) || first.x.length === 0) {
    throw new RangeError('coxPH: each row needs x, an array of at least one covariate');
  }
  const p = first.x.length;
  const time = new Float64Array(n);
  const event = new Uint8Array(n);
  const x = new Float64Array(n * p);
  let cluster: Int32Array | null = null;
  const clusterIds = new Map<string | number, number>();
  for (let i = 0; i < n; i++) {
    const r = rows[i];
    if (r === null || typeof r !== 'object') throw new TypeError(`row ${i}: expected { time, event, x }`);
    const t = r.time;
    if (typeof t !== 'number' || !(t >= 0) || t === Infinity) {
      throw new RangeError(`row ${i}: time must be a finite number >= 0, got ${String(t)}`);
    }
    const e = r.event;
    if (e !== true && e !== false) throw new TypeError(`row ${i}: event must be true or false`);
    const xi = r.x;
    if (!Array.isArray(xi) || xi.length !== p) {
      throw new RangeError(`row ${i}: expected ${p} covariates like the first row, got ${Array.isArray(xi) ? xi.length : 'none'}`);
    }
    const cl = r.cluster;
    if (cl !== undefined && cl !== null) {
      if (cluster === null) {
        if (i > 0) throw new RangeError(`row ${i}: has a cluster but row 0 has none; give every row a cluster or none`);
        cluster = new Int32Array(n);
      }
      if (typeof cl !== 'string' && !(typeof cl === 'number' && Number.isFinite(cl))) throw new TypeError(`row ${i}: cluster must be a string or a finite number`);
      let g = clusterIds.get(cl);
      if (g === undefined) clusterIds.set(cl, (g = clusterIds.size));
      cluster[i] = g;
    } else if (cluster !== null) {
      throw new RangeError(`row ${i}: has no cluster but row 0 has one; give every row a cluster or none`);
    }
    time[i] = t;
    if (e) event[i] = 1;
    for (let c = 0; c < p; c++) {
      const v = xi[c];
      if (typeof v !== 'number' || !(v - v === 0)) {
        throw new RangeError(`row ${i}: covariate ${c} must be a finite number, got ${String(v)}`);
      }
      x[i * p + c] = v;
    }
  }
  return { time, event, p, x, cluster };
}

/** Checks columns (from a caller or from rowsToColumns), sorts them by time, centres and scales the covariates. */
function prepare(data: CoxColumns): Sorted {
  const { time: timeIn, event: ev, p, x: xIn } = data;
  const n = timeIn?.length;
  if (!(timeIn instanceof Float64Array) || !(ev instanceof Uint8Array) || !(xIn instanceof Float64Array)) {
    throw new TypeError('coxPHColumns expects { time: Float64Array, event: Uint8Array, p, x: Float64Array }');
  }
  if (n < 2) throw new RangeError(`coxPH needs at least two rows, got ${n}`);
  if (!Number.isInteger(p) || p < 1) throw new RangeError('coxPH: each row needs x, an array of at least one covariate');
  if (ev.length !== n || xIn.length !== n * p) throw new RangeError(`coxPHColumns: expected ${n} events and ${n * p} covariate values for ${n} rows of ${p}`);
  const clusterIn = data.cluster ?? null;
  if (clusterIn !== null && (!(clusterIn instanceof Int32Array) || clusterIn.length !== n)) throw new RangeError(`coxPHColumns: expected a cluster index for each of the ${n} rows`);
  const mean = new Float64Array(p);
  let events = 0;
  let G = 0;
  for (let i = 0; i < n; i++) {
    const t = timeIn[i];
    if (!(t >= 0) || t === Infinity) throw new RangeError(`row ${i}: time must be a finite number >= 0, got ${String(t)}`);
    const e = ev[i];
    if (e === 1) events++;
    else if (e !== 0) throw new TypeError(`row ${i}: event must be true or false`);
    if (clusterIn !== null) {
      const g = clusterIn[i];
      if (g < 0) throw new RangeError(`row ${i}: a cluster index must be >= 0`);
      if (g >= G) G = g + 1;
    }
    for (let c = 0; c < p; c++) {
      const v = xIn[i * p + c];
      if (!(v - v === 0)) throw new RangeError(`row ${i}: covariate ${c} must be a finite number, got ${String(v)}`);
      mean[c] += v;
    }
  }
  if (events === 0) throw new RangeError('coxPH needs at least one event; all rows are censored');
  const index = new Int32Array(n);
  for (let i = 0; i < n; i++) index[i] = i;
  // groupByTime sorts its keys in place: a copy, so the caller's times are left as they were
  const { times, start, payload: order } = groupByTime(timeIn.slice(), index, true);
  const x = new Float64Array(n * p);
  const status = new Uint8Array(n);
  const cluster = clusterIn === null ? null : new Int32Array(n);
  for (let k = 0; k < n; k++) {
    const i = order[k];
    status[k] = ev[i];
    if (cluster !== null) cluster[k] = (clusterIn as Int32Array)[i];
    for (let c = 0; c < p; c++) x[k * p + c] = xIn[i * p + c];
  }
  for (let c = 0; c < p; c++) mean[c] /= n;
  // Centre, then scale by the mean absolute deviation (as R's coxph.fit does);
  // the estimates are rescaled at the end and do not depend on this.
  const scale = new Float64Array(p);
  for (let c = 0; c < p; c++) {
    let mad = 0;
    for (let k = 0; k < n; k++) {
      const v = x[k * p + c] - mean[c];
      x[k * p + c] = v;
      mad += Math.abs(v);
    }
    mad /= n;
    if (!(mad > 0)) throw new RangeError(`coxPH: covariate ${c} is constant, so its effect cannot be estimated`);
    scale[c] = 1 / mad;
    for (let k = 0; k < n; k++) x[k * p + c] *= scale[c];
  }
  return { n, p, x, status, start, D: times.length, scale, cluster, G };
}

/**
 * Score residuals (one row of p per observation, in time order, on the centred and scaled
 * covariates) at beta, as R's residuals(coxph, type = "score"): observation i's share of the
 * score, delta_i (x_i - xbar(t_i)) - sum over event times t <= t_i of r_i (x_i - xbar(t)) dLambda(t),
 * with Efron's weights at tied event times (a death among d tied ones takes part in the k-th of the
 * d steps with weight 1 - k/d, and takes 1/d of each step's mean). Risk-set sums are accumulated
 * backwards, the cumulative hazard terms forwards: O(n p).
 */
function scoreResiduals(s: Sorted, beta: Float64Array, efron: boolean): Float64Array {
  const { n, p, x, status, start, D } = s;
  const risk = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let e = 0;
    for (let k = 0; k < p; k++) e += beta[k] * x[i * p + k];
    risk[i] = Math.exp(e);
  }
  // per distinct time: hazard increment for those at risk (h, xh) and for the deaths there (hd, xhd), the deaths' mean (md)
  const h = new Float64Array(D);
  const xh = new Float64Array(D * p);
  const hd = new Float64Array(D);
  const xhd = new Float64Array(D * p);
  const md = new Float64Array(D * p);
  const s1 = new Float64Array(p);
  const d1 = new Float64Array(p);
  let s0 = 0;
  for (let r = D - 1; r >= 0; r--) {
    let d = 0;
    let d0 = 0;
    d1.fill(0);
    for (let i = start[r]; i < start[r + 1]; i++) {
      const w = risk[i];
      s0 += w;
      for (let k = 0; k < p; k++) s1[k] += w * x[i * p + k];
      if (status[i] === 1) {
        d++;
        d0 += w;
        for (let k = 0; k < p; k++) d1[k] += w * x[i * p + k];
      }
    }
    if (d === 0) continue;
    if (!efron || d === 1) {
      h[r] = d / s0;
      hd[r] = d / s0;
      for (let k = 0; k < p; k++) {
        const m = s1[k] / s0;
        xh[r * p + k] = m * h[r];
        xhd[r * p + k] = m * h[r];
        md[r * p + k] = m;
      }
    } else {
      for (let j = 0; j < d; j++) {
        const f = j / d;
        const den = s0 - f * d0;
        h[r] += 1 / den;
        hd[r] += (1 - f) / den;
        for (let k = 0; k < p; k++) {
          const m = (s1[k] - f * d1[k]) / den;
          xh[r * p + k] += m / den;
          xhd[r * p + k] += ((1 - f) * m) / den;
          md[r * p + k] += m / d;
        }
      }
    }
  }
  const out = new Float64Array(n * p);
  let H = 0;
  const XH = new Float64Array(p);
  for (let r = 0; r < D; r++) {
    for (let i = start[r]; i < start[r + 1]; i++) {
      const w = risk[i];
      const dead = status[i] === 1;
      const hOwn = dead ? hd[r] : h[r];
      for (let k = 0; k < p; k++) {
        const xi = x[i * p + k];
        const xhOwn = dead ? xhd[r * p + k] : xh[r * p + k];
        let v = -w * (xi * (H + hOwn) - (XH[k] + xhOwn));
        if (dead) v += xi - md[r * p + k];
        out[i * p + k] = v;
      }
    }
    H += h[r];
    for (let k = 0; k < p; k++) XH[k] += xh[r * p + k];
  }
  return out;
}

/**
 * Robust variance of R's coxph(..., cluster = id) on the scaled covariates: D'D with D the dfbeta
 * residuals (score residuals times the inverse information) summed within each cluster.
 */
function robustVariance(s: Sorted, beta: Float64Array, efron: boolean, inv: Float64Array): Float64Array {
  const { n, p, G } = s;
  const cluster = s.cluster as Int32Array;
  const resid = scoreResiduals(s, beta, efron);
  const sum = new Float64Array(G * p);
  for (let i = 0; i < n; i++) {
    const g = cluster[i] * p;
    for (let k = 0; k < p; k++) sum[g + k] += resid[i * p + k];
  }
  const dfb = new Float64Array(p);
  const v = new Float64Array(p * p);
  for (let g = 0; g < G; g++) {
    for (let k = 0; k < p; k++) {
      let t = 0;
      for (let l = 0; l < p; l++) t += sum[g * p + l] * inv[l * p + k];
      dfb[k] = t;
    }
    for (let k = 0; k < p; k++) for (let l = 0; l < p; l++) v[k * p + l] += dfb[k] * dfb[l];
  }
  return v;
}

/**
 * Cox proportional hazards model by Newton–Raphson with step halving, as in
 * R's survival::coxph (start at beta = 0, convergence when the relative change
 * in log partial likelihood is at most 1e-9, at most 20 iterations). Ties by
 * Efron's method (default) or Breslow's. Standard errors from the inverse of
 * the information matrix at the estimate; Wald p-values and 95% intervals.
 *
 * Throws a clear error instead of returning a doubtful fit: no events,
 * constant or collinear covariates, no convergence in 20 iterations, or a
 * coefficient drifting to infinity (monotone likelihood; R warns
 * "coefficient may be infinite").
 */
export function coxPH(rows: readonly CoxRow[], opts: CoxOptions = {}): CoxResult {
  checkTies(opts);
  return fitCox(prepare(rowsToColumns(rows)), opts);
}

/** `coxPH` on rows given as columns (see CoxColumns): the same fit, the same result, no object per row. */
export function coxPHColumns(data: CoxColumns, opts: CoxOptions = {}): CoxResult {
  checkTies(opts);
  return fitCox(prepare(data), opts);
}

function checkTies(opts: CoxOptions): void {
  const ties = opts.ties ?? 'efron';
  if (ties !== 'efron' && ties !== 'breslow') throw new RangeError(`ties must be 'efron' or 'breslow', got ${String(ties)}`);
}

function fitCox(s: Sorted, opts: CoxOptions): CoxResult {
  const efron = (opts.ties ?? 'efron') === 'efron';
  const { n, p } = s;
  // two covariates: evaluate2, row by row; otherwise the rows' covariate patterns (evaluateGeneral)
  const pat = p === 2 ? null : patternsOf(s);
  const risk = new Float64Array(pat === null ? n : pat.P);
  const eta = new Float64Array(pat === null ? 0 : pat.P);
  let beta = new Float64Array(p);
  let fit = evaluate(s, pat, beta, efron, risk, eta);
  const loglik0 = fit.loglik;
  let loglik = fit.loglik;
  const step0 = choleskySolve(fit.imat, fit.u, p);
  if (step0 === null) {
    throw new RangeError('coxPH: the information matrix is singular; covariates are collinear or carry no information');
  }
  const newBeta = new Float64Array(p);
  for (let k = 0; k < p; k++) newBeta[k] = beta[k] + step0[k];
  let halving = false;
  let converged = false;
  for (let iter = 1; iter <= MAX_ITER; iter++) {
    fit = evaluate(s, pat, newBeta, efron, risk, eta);
    if (fit.finite && Math.abs(1 - loglik / fit.loglik) <= EPS && !halving) {
      converged = true;
      break;
    }
    if (iter === MAX_ITER) break;
    if (!fit.finite || fit.loglik < loglik) {
      halving = true;
      for (let k = 0; k < p; k++) newBeta[k] = (newBeta[k] + beta[k]) / 2;
    } else {
      halving = false;
      loglik = fit.loglik;
      const step = choleskySolve(fit.imat, fit.u, p);
      if (step === null) {
        throw new RangeError('coxPH: the information matrix became singular; covariates are collinear or a coefficient is drifting to infinity');
      }
      beta = newBeta.slice();
      for (let k = 0; k < p; k++) newBeta[k] = beta[k] + step[k];
    }
  }
  if (!converged) {
    throw new Error(`coxPH did not converge in ${MAX_ITER} Newton–Raphson iterations (with step halving); the model may be unidentifiable on these data`);
  }
  const inv = choleskyInverse(fit.imat, p);
  if (inv === null) {
    throw new RangeError('coxPH: the information matrix at the estimate is singular; a coefficient may be infinite');
  }
  // R's check for infinite coefficients: the size of the next Newton step.
  for (let k = 0; k < p; k++) {
    let step = 0;
    for (let l = 0; l < p; l++) step += fit.u[l] * inv[l * p + k];
    step = Math.abs(step);
    if (step > EPS && step > TOLER_INF * Math.abs(newBeta[k])) {
      throw new Error(`coxPH did not converge: the coefficient of covariate ${k} appears to be infinite (monotone likelihood, e.g. no events in one level of a binary covariate)`);
    }
  }
  const robust = s.cluster === null ? null : robustVariance(s, newBeta, efron, inv);
  const z = zForLevel(0.95);
  const coef: number[] = [];
  const se: number[] = [];
  const robustSe: number[] = [];
  const hazardRatio: number[] = [];
  const lower: number[] = [];
  const upper: number[] = [];
  const pValue: number[] = [];
  for (let k = 0; k < p; k++) {
    const b = newBeta[k] * s.scale[k];
    const e = Math.sqrt(inv[k * p + k]) * s.scale[k];
    coef.push(b);
    se.push(e);
    // with clusters the Wald interval and p-value use the robust standard error (as R's summary.coxph)
    const used = robust === null ? e : Math.sqrt(robust[k * p + k]) * s.scale[k];
    if (robust !== null) robustSe.push(used);
    hazardRatio.push(Math.exp(b));
    lower.push(Math.exp(b - z * used));
    upper.push(Math.exp(b + z * used));
    pValue.push(twoSidedNormalP(b / used));
  }
  const lr = 2 * (fit.loglik - loglik0);
  return {
    coef,
    se,
    ...(robust === null ? {} : { robustSe }),
    hazardRatio,
    lower,
    upper,
    pValue,
    logLik: fit.loglik,
    lrChiSquare: lr < 0 ? 0 : lr,
  };
}
