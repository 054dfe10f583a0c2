/**
 * Periapical index (PAI) of Ørstavik, Kerekes & Eriksen (1986, Endod Dent
 * Traumatol 2:20–34): a 1–5 score given to the area around a root apex on a
 * periapical radiograph by comparison with reference images. The
 * descriptions below are Lamina's own short wording, not the paper's.
 * Scores 1–2 count as healthy and 3–5 as apical periodontitis, the usual
 * cut-off (e.g. Trope, Delano & Ørstavik 1999, J Endod 25:345–350).
 */

export type PaiScore = 1 | 2 | 3 | 4 | 5;

export interface PaiLevel {
  score: PaiScore;
  description: string;
  apicalPeriodontitis: boolean;
}

/** Lamina's cut-off: scores above this are apical periodontitis. */
export const PAI_HEALTHY_MAX = 2;

const PAI_DESCRIPTIONS: Readonly<Record<PaiScore, string>> = {
  1: 'Bone around the apex looks normal.',
  2: 'Small changes in the bone pattern, not a sign of disease on their own.',
  3: 'Changed bone pattern with some loss of mineral at the apex.',
  4: 'A clearly outlined dark (radiolucent) area at the apex.',
  5: 'A dark area at the apex with signs of spreading into the surrounding bone.',
};

/** The five levels in score order; `apicalPeriodontitis` follows PAI_HEALTHY_MAX. */
export const PAI_LEVELS: readonly PaiLevel[] = ([1, 2, 3, 4, 5] as const).map((score) => ({
  score,
  description: PAI_DESCRIPTIONS[score],
  apicalPeriodontitis: score > PAI_HEALTHY_MAX,
}));

/** Checks that a value is a PAI score (a whole number 1–5) and returns it typed. */
export function checkPai(score: unknown): PaiScore {
  if (typeof score !== 'number' || !Number.isInteger(score) || score < 1 || score > 5) {
    throw new RangeError(`periapical index must be a whole number from 1 to 5, got ${String(score)}`);
  }
  return score as PaiScore;
}

/** The level (description and healthy/disease reading) of a PAI score. */
export function paiLevel(score: number): PaiLevel {
  return PAI_LEVELS[checkPai(score) - 1];
}

/** true for PAI 3–5 (apical periodontitis), false for 1–2 (healthy). */
export function isApicalPeriodontitis(score: number): boolean {
  return checkPai(score) > PAI_HEALTHY_MAX;
}
