import { twoSidedNormalP, zForLevel } from './distributions';
import { choleskyInverse, choleskySolve, groupEqualRows } from './internal';

export interface LogisticRow {
  y: boolean;
  /** covariates, the same number for every row (the intercept is added) */
  x: number[];
  /** cluster (e.g. patient id); when any row has one, every row must, and robustSe is reported */
  cluster?: string | number;
}

export interface LogisticResult {
  /** intercept first, then one per covariate */
  coef: number[];
  /** model-based standard errors (R glm's summary) */
  se: number[];
  /** cluster-robust standard errors, as sandwich::vcovCL(fit, cluster = ~id, type = "HC1"); only with clusters */
  robustSe?: number[];
  oddsRatio: number[];
  /** 95% Wald interval of the odds ratio (with the robust standard error when there are clusters) */
  lower: number[];
  upper: number[];
  /** two-sided Wald p-value (with the robust standard error when there are clusters) */
  pValue: number[];
  /** log-likelihood at the estimate */
  logLik: number;
}

/** R's glm.control defaults. */
const EPS = 1e-8;
const MAX_ITER = 25;
/** glm.fit's warning threshold for fitted probabilities numerically 0 or 1. */
const FIT_EPS = 10 * 2.220446049250313e-16;

/**
 * Logistic regression by iteratively reweighted least squares, as R's
 * glm(y ~ x, family = binomial): start from mu = (y + 0.5) / 2, converged when
 * |deviance - previous| / (|deviance| + 0.1) < 1e-8, at most 25 iterations.
 * Model-based standard errors from (X'WX)^-1; with clusters also the
 * cluster-robust sandwich with the HC1 and G/(G-1) factors of
 * sandwich::vcovCL (statsmodels' cov_type="cluster" default), and the
 * intervals and p-values then use it.
 *
 * Throws instead of returning a doubtful fit: no variation in y, constant
 * or collinear covariates, complete or quasi-complete separation (fitted
 * probabilities 0 or 1; R only warns), or no convergence.
 */
export function logisticRegression(rows: readonly LogisticRow[]): LogisticResult {
  if (!Array.isArray(rows)) throw new TypeError('logisticRegression expects an array of { y, x }');
  const n = rows.length;
  const first = rows[0];
  if (!first || !Array.isArray(first.x)) throw new RangeError('logisticRegression needs rows of { y, x: number[] }');
  const k = first.x.length + 1;
  if (n <= k) throw new RangeError(`logisticRegression needs more rows (${n}) than coefficients (${k})`);
  const X = new Float64Array(n * k);
  const y = new Float64Array(n);
  let clustered: boolean | null = null;
  const clusterIndex = new Int32Array(n);
  const clusterIds = new Map<string | number, number>();
  for (let i = 0; i < n; i++) {
    const r = rows[i];
    if (r === null || typeof r !== 'object') throw new TypeError(`row ${i}: expected { y, x }`);
    if (r.y !== true && r.y !== false) throw new TypeError(`row ${i}: y must be true or false`);
    if (!Array.isArray(r.x) || r.x.length !== k - 1) throw new RangeError(`row ${i}: expected ${k - 1} covariates like the first row`);
    y[i] = r.y ? 1 : 0;
    X[i * k] = 1;
    for (let c = 1; c < k; c++) {
      const v = r.x[c - 1];
      if (typeof v !== 'number' || !Number.isFinite(v)) throw new RangeError(`row ${i}: covariate ${c - 1} must be a finite number, got ${String(v)}`);
      X[i * k + c] = v;
    }
    const has = r.cluster !== undefined && r.cluster !== null;
    if (clustered === null) clustered = has;
    else if (clustered !== has) throw new RangeError(`row ${i}: either every row has a cluster or none does`);
    if (has) {
      const id = r.cluster as string | number;
      if (typeof id !== 'string' && !(typeof id === 'number' && Number.isFinite(id))) throw new TypeError(`row ${i}: cluster must be a string or a finite number`);
      let g = clusterIds.get(id);
      if (g === undefined) clusterIds.set(id, (g = clusterIds.size));
      clusterIndex[i] = g;
    }
  }
  return fitLogistic(n, k, X, y, clustered ? clusterIndex : null, clusterIds.size);
}

/**
 * The rows of a logistic model as columns (typed arrays), for callers that hold many rows: no
 * object per row. `logisticRegressionColumns` fits them exactly as `logisticRegression` fits the same rows.
 */
export interface LogisticColumns {
  /** 1 or 0 for each row */
  y: Uint8Array;
  /** number of covariates (the intercept is added) */
  p: number;
  /** covariates, row-major: x[i * p + c] is covariate c of row i */
  x: Float64Array;
  /**
   * cluster of each row as an index 0..G-1 (numbered in order of first appearance, as
   * `logisticRegression` numbers its `cluster` values), or absent: with clusters robustSe is reported
   */
  cluster?: Int32Array | null;
}

/** `logisticRegression` on rows given as columns (see LogisticColumns): the same fit, the same result. */
export function logisticRegressionColumns(data: LogisticColumns): LogisticResult {
  const { y: yIn, p, x } = data;
  if (!(yIn instanceof Uint8Array) || !(x instanceof Float64Array) || !Number.isInteger(p) || p < 0) {
    throw new TypeError('logisticRegressionColumns expects { y: Uint8Array, p, x: Float64Array }');
  }
  const n = yIn.length;
  const k = p + 1;
  if (x.length !== n * p) throw new RangeError(`logisticRegressionColumns: expected ${n * p} covariate values for ${n} rows of ${p}`);
  if (n <= k) throw new RangeError(`logisticRegression needs more rows (${n}) than coefficients (${k})`);
  const cluster = data.cluster ?? null;
  if (cluster !== null && (!(cluster instanceof Int32Array) || cluster.length !== n)) throw new RangeError(`logisticRegressionColumns: expected a cluster index for each of the ${n} rows`);
  const X = new Float64Array(n * k);
  const y = new Float64Array(n);
  let G = 0;
  for (let i = 0; i < n; i++) {
    const v = yIn[i];
    if (v !== 0 && v !== 1) throw new TypeError(`row ${i}: y must be true or false`);
    y[i] = v;
    X[i * k] = 1;
    for (let c = 1; c < k; c++) {
      const w = x[i * p + c - 1];
      if (!Number.isFinite(w)) throw new RangeError(`row ${i}: covariate ${c - 1} must be a finite number, got ${String(w)}`);
      X[i * k + c] = w;
    }
    if (cluster !== null) {
      const g = cluster[i];
      if (g < 0) throw new RangeError(`row ${i}: a cluster index must be >= 0`);
      if (g >= G) G = g + 1;
    }
  }
  return fitLogistic(n, k, X, y, cluster, G);
}

/**
 * The IRLS fit and its standard errors on the design X (intercept first, row-major n × k).
 * Rows with the same covariates and outcome are taken as one group of c rows (`groupEqualRows`):
 * every sum of the fit (deviance, X'WX, X'Wz, the log-likelihood) is a sum over groups, each term
 * times c, so a model of factor levels on 100,000 rows costs a few hundred rows per iteration.
 * Only the order of adding changes; the cluster-robust scores are still summed row by row.
 */
function fitLogistic(n: number, k: number, X: Float64Array, y: Float64Array, clusterIndex: Int32Array | null, G: number): LogisticResult {
  let ones = 0;
  for (let i = 0; i < n; i++) ones += y[i];
  if (ones === 0 || ones === n) throw new RangeError('logisticRegression needs both outcomes in the data (every y is the same)');

  const label = new Uint8Array(n);
  for (let i = 0; i < n; i++) label[i] = y[i];
  const groups = groupEqualRows(X, n, k, label);
  const m = groups.size;
  const c = groups.count;
  const gx = new Float64Array(m * k);
  const gy = new Float64Array(m);
  for (let g = 0; g < m; g++) {
    const i = groups.first[g];
    gy[g] = y[i];
    gx.set(X.subarray(i * k, i * k + k), g * k);
  }

  const beta = new Float64Array(k);
  const mu = new Float64Array(m);
  const eta = new Float64Array(m);
  for (let g = 0; g < m; g++) {
    mu[g] = (gy[g] + 0.5) / 2;
    eta[g] = Math.log(mu[g] / (1 - mu[g]));
  }
  const deviance = () => {
    let d = 0;
    for (let g = 0; g < m; g++) d -= 2 * c[g] * (gy[g] === 1 ? Math.log(mu[g]) : Math.log1p(-mu[g]));
    return d;
  };
  let devOld = deviance();
  let converged = false;
  let xtwx = new Float64Array(k * k);
  const wLast = new Float64Array(m); // the working weights of the last IRLS step (R's fit$weights)
  for (let iter = 1; iter <= MAX_ITER; iter++) {
    // weighted least squares of the working response z on X, weights w = mu (1 - mu)
    xtwx = new Float64Array(k * k);
    const xtwz = new Float64Array(k);
    for (let g = 0; g < m; g++) {
      const w = mu[g] * (1 - mu[g]);
      wLast[g] = w;
      const z = eta[g] + (gy[g] - mu[g]) / w;
      const cw = c[g] * w;
      const o = g * k;
      for (let a = 0; a < k; a++) {
        const wa = cw * gx[o + a];
        xtwz[a] += wa * z;
        if (wa === 0) continue; // an indicator column's usual 0 adds nothing
        for (let b = 0; b <= a; b++) xtwx[a * k + b] += wa * gx[o + b];
      }
    }
    for (let a = 0; a < k; a++) for (let b = 0; b < a; b++) xtwx[b * k + a] = xtwx[a * k + b];
    const next = choleskySolve(xtwx, xtwz, k);
    if (next === null) throw new RangeError('logisticRegression: covariates are constant or collinear (X\'WX is singular)');
    beta.set(next);
    for (let g = 0; g < m; g++) {
      let e = 0;
      const o = g * k;
      for (let a = 0; a < k; a++) e += gx[o + a] * beta[a];
      eta[g] = e;
      mu[g] = 1 / (1 + Math.exp(-e));
    }
    const dev = deviance();
    if (!Number.isFinite(dev)) break;
    if (Math.abs(dev - devOld) / (Math.abs(dev) + 0.1) < EPS) {
      converged = true;
      break;
    }
    devOld = dev;
  }
  for (let g = 0; g < m; g++) {
    if (mu[g] < FIT_EPS || mu[g] > 1 - FIT_EPS) {
      throw new RangeError('logisticRegression: fitted probabilities of 0 or 1 (complete or quasi-complete separation); a coefficient is infinite');
    }
  }
  if (!converged) throw new Error(`logisticRegression did not converge in ${MAX_ITER} iterations; the data may be separated`);
  // as glm's summary: (X'WX)^-1 with the weights the last IRLS step used (they agree with the final ones at convergence)
  const inv = choleskyInverse(xtwx, k);
  if (inv === null) throw new RangeError('logisticRegression: the information matrix is singular');
  const se = Array.from({ length: k }, (_, a) => Math.sqrt(inv[a * k + a]));

  let robustSe: number[] | undefined;
  if (clusterIndex !== null) {
    if (G < 2) throw new RangeError('logisticRegression: cluster-robust errors need at least two clusters');
    // bread = (X'WX)^-1 (as sandwich's bread.glm), meat = sum over clusters of (sum of scores)(sum of scores)'
    const bread = inv;
    // sandwich's estfun.glm: working residual (y - mu) / (mu (1 - mu)) at the estimate times the
    // working weight glm.fit stores, which is the last IRLS step's (they agree at convergence); the same for a group's rows
    const r = new Float64Array(m);
    for (let g = 0; g < m; g++) r[g] = ((gy[g] - mu[g]) / (mu[g] * (1 - mu[g]))) * wLast[g];
    const score = new Float64Array(G * k);
    for (let i = 0; i < n; i++) {
      const g = groups.group[i];
      const o = g * k;
      const cl = clusterIndex[i] * k;
      for (let a = 0; a < k; a++) score[cl + a] += r[g] * gx[o + a];
    }
    const meat = new Float64Array(k * k);
    for (let g = 0; g < G; g++) {
      for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) meat[a * k + b] += score[g * k + a] * score[g * k + b];
    }
    const adj = (G / (G - 1)) * ((n - 1) / (n - k));
    const bm = new Float64Array(k * k);
    for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) {
      let s = 0;
      for (let e = 0; e < k; e++) s += bread[a * k + e] * meat[e * k + b];
      bm[a * k + b] = s;
    }
    robustSe = [];
    for (let a = 0; a < k; a++) {
      let s = 0;
      for (let e = 0; e < k; e++) s += bm[a * k + e] * bread[e * k + a];
      robustSe.push(Math.sqrt(adj * s));
    }
  }
  const useSe = robustSe ?? se;
  const z = zForLevel(0.95);
  const coef = Array.from(beta);
  let logLik = 0;
  for (let g = 0; g < m; g++) logLik += c[g] * (gy[g] === 1 ? Math.log(mu[g]) : Math.log1p(-mu[g]));
  return {
    coef,
    se,
    ...(robustSe ? { robustSe } : {}),
    oddsRatio: coef.map((b) => Math.exp(b)),
    lower: coef.map((b, a) => Math.exp(b - z * useSe[a])),
    upper: coef.map((b, a) => Math.exp(b + z * useSe[a])),
    pValue: coef.map((b, a) => twoSidedNormalP(b / useSe[a])),
    logLik,
  };
}
