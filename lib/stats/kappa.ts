import { zForLevel } from './distributions';

export interface KappaResult {
  kappa: number;
  /** (weighted) proportion of agreement observed */
  observedAgreement: number;
  /** (weighted) proportion of agreement expected by chance from the two raters' margins */
  expectedAgreement: number;
}

export interface KappaOptions {
  /** 'none' (default): Cohen 1960; 'linear' or 'quadratic': Cohen 1968 weighted kappa */
  weights?: 'none' | 'linear' | 'quadratic';
  /** the ordered categories; default: `scale` when given, else the distinct values of both raters, ascending */
  categories?: number[];
  /**
   * the full rating scale the scores come from (e.g. PAI 1–5: [1, 2, 3, 4, 5]). When given and
   * `categories` is not, the categories are the whole scale, so a score no rater used still
   * counts in the positions that weighted kappa's weights are computed from.
   */
  scale?: readonly number[];
}

/**
 * Kappa from a k x k table of counts or proportions (rows: rater 1, columns:
 * rater 2) and a matrix of disagreement weights (0 on the diagonal), as in
 * Cohen (1968): kappa_w = 1 - sum(w * p_observed) / sum(w * p_chance).
 * Agreement proportions are reported as 1 - weighted disagreement, with the
 * weights divided by their largest value so that they lie in [0, 1].
 * Without weights, every disagreement weighs 1 (Cohen 1960).
 */
export function weightedKappaFromTable(table: readonly (readonly number[])[], disagreementWeights?: readonly (readonly number[])[]): KappaResult {
  const k = table.length;
  if (k < 1) throw new RangeError('kappa needs at least one category');
  let total = 0;
  for (const row of table) {
    if (!Array.isArray(row) || row.length !== k) throw new RangeError('kappa needs a square table');
    for (const v of row) {
      if (typeof v !== 'number' || !Number.isFinite(v) || v < 0) throw new RangeError(`kappa: table cells must be >= 0, got ${String(v)}`);
      total += v;
    }
  }
  if (!(total > 0)) throw new RangeError('kappa needs at least one rated pair');
  const w: number[][] = [];
  let wMax = 0;
  for (let i = 0; i < k; i++) {
    w.push([]);
    for (let j = 0; j < k; j++) {
      const v = disagreementWeights ? disagreementWeights[i]?.[j] : i === j ? 0 : 1;
      if (typeof v !== 'number' || !Number.isFinite(v) || v < 0) throw new RangeError(`kappa: weight [${i}][${j}] must be a number >= 0`);
      if (i === j && v !== 0) throw new RangeError('kappa: disagreement weights must be 0 on the diagonal');
      w[i].push(v);
      wMax = Math.max(wMax, v);
    }
  }
  const rows = table.map((row) => row.reduce((a, b) => a + b, 0) / total);
  const cols = table[0].map((_, j) => table.reduce((a, row) => a + row[j], 0) / total);
  let wObs = 0;
  let wExp = 0;
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      const wij = wMax > 0 ? w[i][j] / wMax : 0;
      wObs += wij * (table[i][j] / total);
      wExp += wij * rows[i] * cols[j];
    }
  }
  if (!(wExp > 0)) {
    throw new RangeError('kappa is undefined: chance disagreement is zero (both raters used a single category)');
  }
  return { kappa: 1 - wObs / wExp, observedAgreement: 1 - wObs, expectedAgreement: 1 - wExp };
}

/**
 * Cohen's kappa for two raters' paired ratings, optionally weighted (linear
 * |i - j| or quadratic (i - j)^2 disagreement weights, where i and j are the
 * positions of the two ratings in the ordered categories), matching
 * scikit-learn's cohen_kappa_score (its `labels` are Lamina's `categories`).
 * Pass the rating `scale` so that the positions come from the whole scale,
 * not only from the scores the two raters happened to use.
 */
export function cohenKappa(pairs: readonly (readonly [number, number])[], opts: KappaOptions = {}): KappaResult {
  const weights = opts.weights ?? 'none';
  if (weights !== 'none' && weights !== 'linear' && weights !== 'quadratic') {
    throw new RangeError(`weights must be 'none', 'linear' or 'quadratic', got ${String(weights)}`);
  }
  if (!Array.isArray(pairs) || pairs.length === 0) throw new RangeError('cohenKappa needs at least one pair of ratings');
  let categories = opts.categories;
  if (categories === undefined && opts.scale !== undefined) {
    if (!Array.isArray(opts.scale) || opts.scale.length === 0) throw new RangeError('cohenKappa: scale must be a non-empty array of scores');
    categories = [...opts.scale].sort((a, b) => a - b);
  }
  if (categories === undefined) {
    const seen = new Set<number>();
    for (const pair of pairs) {
      if (!Array.isArray(pair) || pair.length !== 2) throw new TypeError('cohenKappa: each pair must be [rating1, rating2]');
      seen.add(pair[0]);
      seen.add(pair[1]);
    }
    categories = [...seen].sort((a, b) => a - b);
  }
  const index = new Map<number, number>();
  categories.forEach((c, i) => {
    if (typeof c !== 'number' || !Number.isFinite(c)) throw new RangeError(`cohenKappa: category ${String(c)} is not a finite number`);
    if (index.has(c)) throw new RangeError(`cohenKappa: category ${c} is listed twice`);
    index.set(c, i);
  });
  const k = categories.length;
  const table = Array.from({ length: k }, () => new Array<number>(k).fill(0));
  pairs.forEach((pair, n) => {
    if (!Array.isArray(pair) || pair.length !== 2) throw new TypeError(`cohenKappa: pair ${n} must be [rating1, rating2]`);
    const i = index.get(pair[0]);
    const j = index.get(pair[1]);
    if (i === undefined || j === undefined) throw new RangeError(`cohenKappa: pair ${n} has a rating not in the categories`);
    table[i][j]++;
  });
  const w = Array.from({ length: k }, (_, i) =>
    Array.from({ length: k }, (_, j) => (weights === 'none' ? (i === j ? 0 : 1) : weights === 'linear' ? Math.abs(i - j) : (i - j) * (i - j))),
  );
  return weightedKappaFromTable(table, w);
}

export interface KappaInterval extends KappaResult {
  /** Number of rated pairs. */
  n: number;
  /** Large-sample standard error of kappa (Fleiss, Cohen & Everitt 1969), not under the null. */
  se: number;
  /** Confidence limits kappa ± z·se (not clipped to [-1, 1]: reported as computed). */
  lower: number;
  upper: number;
  level: number;
}

/**
 * Cohen's kappa (unweighted, linear or quadratic weights) with its large-sample standard error
 * and a Wald interval, as Fleiss, Cohen & Everitt (1969, Psychol Bull 72:323–327) give it and as
 * statsmodels' `cohens_kappa(table, wt=…)` computes `std_kappa` / `kappa_low` / `kappa_upp`
 * (checked in tests/reference/kappa-ci.test.ts). Pass `scale` ([1, 2, 3, 4, 5] for PAI) so the
 * table, and so the weights' positions, cover the whole scale.
 */
export function cohenKappaInterval(pairs: readonly (readonly [number, number])[], opts: KappaOptions & { level?: number } = {}): KappaInterval {
  const level = opts.level ?? 0.95;
  const point = cohenKappa(pairs, opts);
  const categories = opts.categories ?? (opts.scale ? [...opts.scale].sort((a, b) => a - b) : [...new Set(pairs.flat())].sort((a, b) => a - b));
  const k = categories.length;
  const index = new Map(categories.map((c, i) => [c, i]));
  const n = pairs.length;
  const p = Array.from({ length: k }, () => new Array<number>(k).fill(0));
  for (const [a, b] of pairs) p[index.get(a)!]![index.get(b)!]! += 1 / n;
  const weights = opts.weights ?? 'none';
  // agreement weights in [0, 1]: 1 on the diagonal
  const span = k - 1;
  const w = Array.from({ length: k }, (_, i) =>
    Array.from({ length: k }, (_, j) => {
      if (weights === 'none' || span === 0) return i === j ? 1 : 0;
      const d = Math.abs(i - j) / span;
      return weights === 'linear' ? 1 - d : 1 - d * d;
    }),
  );
  const rows = p.map((r) => r.reduce((a, b) => a + b, 0));
  const cols = p[0]!.map((_, j) => p.reduce((a, r) => a + r[j]!, 0));
  let pe = 0;
  for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) pe += w[i]![j]! * rows[i]! * cols[j]!;
  const kappa = point.kappa;
  const wRow = rows.map((_, i) => cols.reduce((a, c, j) => a + c * w[i]![j]!, 0));
  const wCol = cols.map((_, j) => rows.reduce((a, r, i) => a + r * w[i]![j]!, 0));
  let termA = 0;
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) termA += p[i]![j]! * (w[i]![j]! - (wRow[i]! + wCol[j]!) * (1 - kappa)) ** 2;
  }
  const variance = (termA - (kappa - pe * (1 - kappa)) ** 2) / ((1 - pe) ** 2 * n);
  const se = Math.sqrt(Math.max(0, variance));
  const z = zForLevel(level);
  return { ...point, n, se, lower: kappa - z * se, upper: kappa + z * se, level };
}
