/**
 * CBCT periapical index (CBCT-PAI) of Estrela et al. (2008, J Endod
 * 34:1325–1331): a 0–5 score from the largest diameter of the periapical
 * radiolucency measured on cone-beam CT, with two suffixes for the cortical
 * plate: E (expansion) and D (destruction).
 *
 * The paper gives ranges without saying which side of each limit a value on
 * the limit falls. Lamina's rule, after rounding to 0.01 mm (see measure.ts):
 *   0  diameter <= 0.5 mm  intact periapical bone (Lamina reads the paper's
 *                          lowest range as starting above 0.5 mm — from memory
 *                          of its table; 0.5 mm or less is within the width
 *                          of a normal ligament space, common practice)
 *   1  0.5 < d <= 1.0 mm   (so 1.0 mm scores 1, 1.01 mm scores 2)
 *   2  1.0 < d <= 2.0 mm
 *   3  2.0 < d <= 4.0 mm
 *   4  4.0 < d <= 8.0 mm
 *   5  d > 8.0 mm
 * Each upper limit belongs to the lower score.
 */
import { roundMm } from './measure';

export type CbctPaiScore = 0 | 1 | 2 | 3 | 4 | 5;

/** Upper limits (inclusive, mm) of scores 0–4; anything larger scores 5. */
export const CBCT_PAI_UPPER_MM: readonly number[] = [0.5, 1, 2, 4, 8];

export const CBCT_PAI_DESCRIPTIONS: Readonly<Record<CbctPaiScore, string>> = {
  0: 'No radiolucency beyond a normal ligament space: intact bone around the apex.',
  1: 'Radiolucency up to 1 mm across.',
  2: 'Radiolucency over 1 mm and up to 2 mm across.',
  3: 'Radiolucency over 2 mm and up to 4 mm across.',
  4: 'Radiolucency over 4 mm and up to 8 mm across.',
  5: 'Radiolucency over 8 mm across.',
};

export interface CbctPaiResult {
  score: CbctPaiScore;
  /** E: the cortical plate is expanded */
  expansion: boolean;
  /** D: the cortical plate is destroyed */
  destruction: boolean;
  /** score with suffixes, e.g. "3", "4E", "5ED" */
  label: string;
  description: string;
}

/** The CBCT-PAI score (no suffixes) of a largest lesion diameter in mm. */
export function cbctPaiScore(diameterMm: number): CbctPaiScore {
  const d = roundMm(diameterMm, 'lesion diameter');
  if (d < 0) throw new RangeError(`lesion diameter cannot be negative, got ${diameterMm}`);
  for (let s = 0; s < CBCT_PAI_UPPER_MM.length; s++) if (d <= CBCT_PAI_UPPER_MM[s]) return s as CbctPaiScore;
  return 5;
}

/**
 * CBCT-PAI from the largest lesion diameter (mm) and the state of the
 * cortical plate. Expansion or destruction without a lesion (score 0) is
 * contradictory and is an error.
 */
export function cbctPai(diameterMm: number, cortex: { expansion?: boolean; destruction?: boolean } = {}): CbctPaiResult {
  const score = cbctPaiScore(diameterMm);
  const expansion = cortex.expansion === true;
  const destruction = cortex.destruction === true;
  if (score === 0 && (expansion || destruction)) {
    throw new RangeError('cortical expansion or destruction was recorded, but the diameter scores 0 (no lesion); check the measurement');
  }
  const label = `${score}${expansion ? 'E' : ''}${destruction ? 'D' : ''}`;
  return { score, expansion, destruction, label, description: CBCT_PAI_DESCRIPTIONS[score] };
}
