export interface CensoredInterval {
  /** last time the event was known not to have happened (days, or any unit), >= 0 */
  left: number;
  /** first time it was known to have happened; null: right-censored at `left`; equal to `left`: exact */
  right: number | null;
}

/** One Turnbull innermost interval that carries probability (R's survfit reports its curve there). */
export interface TurnbullStep {
  /** the interval is (lower, upper]; lower === upper for an exact time */
  lower: number;
  upper: number;
  /** probability mass of the event time in this interval */
  probability: number;
  /** S(upper): probability of the event after `upper` */
  survival: number;
}

export interface TurnbullOptions {
  /** convergence tolerance on the Kuhn–Tucker (self-consistency) conditions, default 1e-7 */
  tolerance?: number;
  /** maximum number of EM steps, default 200,000 */
  maxIterations?: number;
}

/**
 * Endpoint order at equal values: an exact time opens first ("[v"), then
 * intervals close ("v]"), then intervals that start at v open ("(v"): so (a, v]
 * holds v and (v, b] does not, as in R's Surv(type = "interval2").
 */
const OPEN_EXACT = 0;
const CLOSE = 1;
const OPEN = 2;

/**
 * Turnbull's nonparametric maximum-likelihood estimate of the distribution of
 * an event time known only to lie in an interval (Turnbull 1976, J R Stat Soc
 * B 38:290–295): `right === null` is right-censored at `left`, `left === right`
 * an exact time, otherwise the event happened in (left, right] (R's
 * Surv(left, right, type = "interval2") conventions; left = 0 is (0, right]).
 *
 * The mass can sit only on the innermost intervals (a left end followed by a
 * right end with no other end between them). It is found by the
 * self-consistency (EM) algorithm, accelerated by SQUAREM (Varadhan & Roland
 * 2008, Scand J Stat 35:335–353), and iterated until the Kuhn–Tucker
 * conditions hold: with N observations, d_j = (1/N) sum_i [j in i] / P_i equals
 * 1 where p_j > 0 and is at most 1 elsewhere, to `tolerance` (the equality weighed
 * by min(1, m p_j), so that masses still shrinking towards 0 do not hold it up). Each step costs
 * O(K + m) for K distinct observed intervals and m innermost intervals
 * (prefix sums), not O(K m).
 *
 * R's survfit finds the same estimate by a Kaplan–Meier-based EM with Aitken
 * steps that stops when the curve moves by less than 5e-5, so it agrees with
 * this estimate to about that order, not to rounding (see lib/stats/README.md).
 *
 * One row per innermost interval with positive mass, in time order; the mass
 * beyond the last finite one (right-censored tail) is the last row's survival.
 */
export function turnbull(intervals: readonly CensoredInterval[], opts: TurnbullOptions = {}): TurnbullStep[] {
  if (!Array.isArray(intervals)) throw new TypeError('turnbull expects an array of { left, right }');
  const n = intervals.length;
  if (n === 0) throw new RangeError('turnbull needs at least one observation');
  // 1e-7: the EM's last digits come slowly when there are many innermost intervals (day-level
  // review dates): 20,000 such cases need about 50,000 steps for 1e-8 and would need far more for
  // 1e-10, while the curve is then already within about 1e-6 of the maximum
  const tol = opts.tolerance ?? 1e-7;
  const maxIter = opts.maxIterations ?? 200_000;
  const left = new Float64Array(n);
  const right = new Float64Array(n); // Infinity when right-censored
  for (let i = 0; i < n; i++) {
    const o = intervals[i];
    if (o === null || typeof o !== 'object') throw new TypeError(`interval ${i}: expected { left, right }`);
    const l = o.left;
    const r = o.right;
    if (typeof l !== 'number' || !(l >= 0) || l === Infinity) throw new RangeError(`interval ${i}: left must be a finite number >= 0, got ${String(l)}`);
    if (r !== null && (typeof r !== 'number' || !(r >= l) || r === Infinity)) {
      throw new RangeError(`interval ${i}: right must be null (right-censored) or a finite number >= left, got ${String(r)}`);
    }
    left[i] = l + 0;
    right[i] = r === null ? Infinity : r + 0;
  }
  // distinct finite end values, ascending; each value v has three key positions 3 rank(v) + order
  const all = new Float64Array(2 * n);
  let na = 0;
  for (let i = 0; i < n; i++) {
    all[na++] = left[i];
    if (right[i] !== Infinity) all[na++] = right[i];
  }
  const sorted = all.subarray(0, na).sort();
  let U = 0;
  for (let k = 0; k < na; k++) if (k === 0 || sorted[k] !== sorted[k - 1]) sorted[U++] = sorted[k];
  const values = sorted.slice(0, U);
  const rank = (v: number): number => {
    let lo = 0;
    let hi = U - 1;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (values[mid] < v) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  };
  const P = 3 * U + 1; // the last position is +infinity (the right end of right-censored observations)
  const kind = new Int8Array(P); // 0 none, 1 a left end (open), 2 a right end (close)
  const lpos = new Int32Array(n);
  const rpos = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    const rl = 3 * rank(left[i]);
    if (right[i] === left[i]) {
      lpos[i] = rl + OPEN_EXACT;
      rpos[i] = rl + CLOSE;
    } else {
      lpos[i] = rl + OPEN;
      rpos[i] = right[i] === Infinity ? P - 1 : 3 * rank(right[i]) + CLOSE;
    }
    kind[lpos[i]] = 1;
    kind[rpos[i]] = 2;
  }
  // innermost intervals: a left end followed directly by a right end
  const innerL: number[] = [];
  const innerR: number[] = [];
  let lastLeft = -1;
  for (let p = 0; p < P; p++) {
    if (kind[p] === 1) lastLeft = p;
    else if (kind[p] === 2) {
      if (lastLeft >= 0) {
        innerL.push(lastLeft);
        innerR.push(p);
      }
      lastLeft = -1;
    }
  }
  const m = innerL.length;
  // firstFrom[p]: first innermost interval whose left end is at or after p; lastTo[p]: last whose right end is at or before p
  const firstFrom = new Int32Array(P + 1).fill(m);
  for (let j = m - 1; j >= 0; j--) firstFrom[innerL[j]] = j;
  for (let p = P - 1; p >= 0; p--) if (firstFrom[p] === m) firstFrom[p] = firstFrom[p + 1];
  const lastTo = new Int32Array(P).fill(-1);
  for (let j = 0; j < m; j++) lastTo[innerR[j]] = j;
  for (let p = 1; p < P; p++) if (lastTo[p] === -1) lastTo[p] = lastTo[p - 1];
  // distinct observations as innermost-index ranges [a, b] with their counts
  const counts = new Map<number, number>();
  for (let i = 0; i < n; i++) {
    const a = firstFrom[lpos[i]];
    const b = lastTo[rpos[i]];
    const key = a * (m + 1) + b;
    counts.set(key, (counts.get(key) ?? 0) + 1);
  }
  const K = counts.size;
  const A = new Int32Array(K);
  const B = new Int32Array(K);
  const W = new Float64Array(K);
  {
    let k = 0;
    for (const [key, c] of counts) {
      A[k] = Math.floor(key / (m + 1));
      B[k] = key - A[k] * (m + 1);
      W[k] = c / n;
      k++;
    }
  }

  const prefix = new Float64Array(m + 1);
  const diff = new Float64Array(m + 1);
  /** One EM step from p into out; returns the log-likelihood at p. Leaves d_j (the gradient / N) in grad. */
  const grad = new Float64Array(m);
  const emStep = (p: Float64Array, out: Float64Array): number => {
    prefix[0] = 0;
    for (let j = 0; j < m; j++) prefix[j + 1] = prefix[j] + p[j];
    diff.fill(0);
    let ll = 0;
    for (let k = 0; k < K; k++) {
      const pk = prefix[B[k] + 1] - prefix[A[k]];
      ll += W[k] * Math.log(pk);
      const q = W[k] / pk;
      diff[A[k]] += q;
      diff[B[k] + 1] -= q;
    }
    let run = 0;
    let total = 0;
    for (let j = 0; j < m; j++) {
      run += diff[j];
      grad[j] = run;
      const v = p[j] * run;
      out[j] = v;
      total += v;
    }
    for (let j = 0; j < m; j++) out[j] /= total;
    return ll;
  };
  const loglik = (p: Float64Array): number => {
    prefix[0] = 0;
    for (let j = 0; j < m; j++) prefix[j + 1] = prefix[j] + p[j];
    let ll = 0;
    for (let k = 0; k < K; k++) ll += W[k] * Math.log(prefix[B[k] + 1] - prefix[A[k]]);
    return ll;
  };
  /** Largest violation of the Kuhn–Tucker conditions at p (grad must be from emStep at p). */
  const violation = (p: Float64Array): number => {
    let worst = 0;
    for (let j = 0; j < m; j++) {
      const g = grad[j] - 1;
      if (p[j] > 0) worst = Math.max(worst, Math.abs(g) * Math.min(1, p[j] * m), g);
      else worst = Math.max(worst, g);
    }
    return worst;
  };

  let p = new Float64Array(m).fill(1 / m);
  const p1 = new Float64Array(m);
  const p2 = new Float64Array(m);
  const r = new Float64Array(m);
  const v = new Float64Array(m);
  let iter = 0;
  let converged = false;
  while (iter < maxIter) {
    const ll0 = emStep(p, p1);
    iter++;
    if (violation(p) <= tol) {
      converged = true;
      break;
    }
    emStep(p1, p2);
    iter++;
    let rr = 0;
    let vv = 0;
    for (let j = 0; j < m; j++) {
      r[j] = p1[j] - p[j];
      v[j] = p2[j] - 2 * p1[j] + p[j];
      rr += r[j] * r[j];
      vv += v[j] * v[j];
    }
    let next = p2;
    if (vv > 0) {
      // SQUAREM, scheme S3: alpha = -|r| / |v|, at most -1 (alpha = -1 is the plain double EM step)
      const alpha = Math.min(-1, -Math.sqrt(rr / vv));
      const q = new Float64Array(m);
      let total = 0;
      for (let j = 0; j < m; j++) {
        const x = p[j] - 2 * alpha * r[j] + alpha * alpha * v[j];
        q[j] = x > 0 ? x : 0;
        total += q[j];
      }
      if (total > 0) {
        for (let j = 0; j < m; j++) q[j] /= total;
        const ll = loglik(q);
        if (Number.isFinite(ll) && ll >= ll0) next = q;
      }
    }
    p = next === p2 ? p2.slice() : next;
  }
  if (!converged) {
    throw new Error(`turnbull did not converge in ${maxIter} EM steps (largest Kuhn–Tucker violation above ${tol})`);
  }
  // masses that the EM is still shrinking towards 0 at a converged solution are rounding: drop below 1e-12
  for (let j = 0; j < m; j++) if (!(p[j] > 1e-12)) p[j] = 0;
  let total = 0;
  for (let j = 0; j < m; j++) total += p[j];
  // S(upper) as the mass after each interval (a sum from the end, so the tail keeps its precision)
  const after = new Float64Array(m);
  for (let j = m - 2; j >= 0; j--) after[j] = after[j + 1] + p[j + 1] / total;
  const rows: TurnbullStep[] = [];
  for (let j = 0; j < m; j++) {
    if (p[j] === 0) continue;
    if (innerR[j] === P - 1) continue; // the right-censored tail (v, infinity): the last row's survival
    const lower = values[Math.floor(innerL[j] / 3)];
    const upper = values[Math.floor(innerR[j] / 3)];
    rows.push({ lower, upper, probability: p[j] / total, survival: after[j] });
  }
  return rows;
}
