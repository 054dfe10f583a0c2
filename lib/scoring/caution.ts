/** Shown by screens beside any score or outcome that Lamina works out. */
export const SCORING_CAUTION =
  'Worked out from the findings as entered, to support clinical judgement. ' +
  'It is not a diagnosis: check it against the images and the patient.';
