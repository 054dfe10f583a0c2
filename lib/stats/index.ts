/**
 * Lamina's outcome statistics: pure functions with no I/O, shared by screens,
 * jobs, exports and the demo seed.
 *
 * - wilsonInterval: a proportion (e.g. success rate) with its Wilson interval
 * - kaplanMeier, medianSurvival, restrictedMean: survival curves (R survival::survfit conventions)
 * - logRank: comparison of survival curves across groups (survdiff)
 * - coxPH: proportional hazards regression (coxph, Efron ties by default); coxPHColumns: the same
 *   fit of rows given as typed-array columns (no object per row, for 100,000-row models)
 * - chiSquareTest, fisherExact2x2: tests on tables of counts
 * - cohenKappa: agreement between two raters (e.g. two examiners' index scores)
 * - turnbull: survival from interval-censored event times (events found at reviews)
 * - cumulativeIncidence: Aalen–Johansen incidence of competing causes
 * - logisticRegression: binary outcome regression, optionally with cluster-robust errors;
 *   logisticRegressionColumns: the same fit of rows given as typed-array columns
 * - funnelLimits: exact binomial funnel-plot limits for a proportion
 *
 * Every function either returns defined numbers or throws an Error with a
 * plain message; none returns NaN. See lib/stats/README.md.
 */
export { wilsonInterval } from './wilson';
export type { ProportionInterval } from './wilson';
export { kaplanMeier, medianSurvival, restrictedMean } from './kaplan-meier';
export type { SurvivalObservation, KaplanMeierStep, KaplanMeierOptions, ConfType, MedianSurvival } from './kaplan-meier';
export { restrictedMeanInterval } from './restricted-mean';
export type { RestrictedMeanInterval } from './restricted-mean';
export { logRank } from './log-rank';
export type { LogRankResult, LogRankObservation } from './log-rank';
export { coxPH, coxPHColumns } from './cox';
export type { CoxRow, CoxColumns, CoxOptions, CoxResult } from './cox';
export { chiSquareTest, fisherExact2x2 } from './contingency';
export type { ChiSquareResult } from './contingency';
export { cohenKappa, cohenKappaInterval, weightedKappaFromTable } from './kappa';
export type { KappaResult, KappaOptions, KappaInterval } from './kappa';
export { turnbull } from './turnbull';
export type { CensoredInterval, TurnbullStep, TurnbullOptions } from './turnbull';
export { cumulativeIncidence } from './competing-risks';
export type { CompetingRiskRow, CumulativeIncidenceStep, CumulativeIncidenceOptions } from './competing-risks';
export { logisticRegression, logisticRegressionColumns } from './logistic';
export type { LogisticRow, LogisticColumns, LogisticResult } from './logistic';
export { funnelLimits } from './funnel';
export type { FunnelLimits } from './funnel';
