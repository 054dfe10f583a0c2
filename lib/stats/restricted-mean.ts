import { zForLevel } from './distributions';
import { restrictedMean, type KaplanMeierStep } from './kaplan-meier';

export interface RestrictedMeanInterval {
  /** the restricted horizon */
  tau: number;
  /** area under the Kaplan–Meier curve from 0 to tau */
  mean: number;
  /** its standard error (R: se(rmean)) */
  se: number;
  /** mean ∓ z·se, clipped to [0, tau] */
  lower: number;
  upper: number;
}

/**
 * Restricted mean survival time up to tau with its standard error and a Wald
 * interval, as R's survival package reports them (print(survfit, rmean = tau),
 * survival:::survmean): with A_j the area under the curve from the j-th row's
 * time to tau, var = Σ_{t_j ≤ tau} A_j² · d_j / (n_j (n_j − d_j)) (the Greenwood
 * terms; a row with n_j = d_j contributes 0, as in R). R prints only the
 * standard error; the interval mean ± z·se is the usual one (Klein &
 * Moeschberger 2003, §4.5), clipped to [0, tau].
 */
export function restrictedMeanInterval(steps: readonly KaplanMeierStep[], tau: number, level = 0.95): RestrictedMeanInterval {
  const mean = restrictedMean(steps, tau); // validates the rows and tau
  const z = zForLevel(level);
  // rows up to tau, then the areas after each row's time, from the end
  let k = 0;
  while (k < steps.length && steps[k]!.time <= tau) k++;
  let after = 0;
  let variance = 0;
  for (let j = k - 1; j >= 0; j--) {
    const r = steps[j]!;
    const nextT = j + 1 < k ? steps[j + 1]!.time : tau;
    after += (nextT - r.time) * r.survival;
    const free = r.nRisk - r.nEvent;
    if (r.nEvent > 0 && free > 0) variance += (after * after * r.nEvent) / (r.nRisk * free);
  }
  const se = Math.sqrt(variance);
  return { tau, mean, se, lower: Math.max(0, mean - z * se), upper: Math.min(tau, mean + z * se) };
}
