import { z } from 'zod';
import { FILM_ROLES, FILM_ROLE_LABELS, FILM_VARIANTS } from '@/lib/films/roles';
import { MAX_OUTLINE_POINTS, MAX_REFERENCE_MM, MIN_REFERENCE_MM } from '@/lib/films/calibration';

/** The fields of a film upload besides the file (multipart form fields). */
export const FilmUploadFields = z.object({
  role: z.enum(FILM_ROLES, { error: `Choose what the film shows: ${Object.values(FILM_ROLE_LABELS).join(', ')}.` }),
  /** The recall visit the film was taken at (optional; a visit of this case). */
  visitId: z
    .string()
    .trim()
    .max(64, 'Choose a recall visit of this case.')
    .optional()
    .transform((v) => (v ? v : undefined)),
});
export type FilmUploadFields = z.output<typeof FilmUploadFields>;

/** Route params of a stored file of a film. */
export const FilmFileParams = z.object({
  id: z.string().trim().min(1, 'Missing id.').max(64, 'Unknown id.'),
  variant: z.enum(FILM_VARIANTS, { error: 'Ask for the thumbnail, web or original file.' }),
});

/** A point on a film's original image, in pixels (the service checks it lies on the image). */
const FilmPointSchema = z.object(
  {
    x: z.number({ error: 'A point needs x in pixels.' }).finite('A point’s x must be a finite number.').min(0, 'A point must lie on the film.').max(100_000, 'A point must lie on the film.'),
    y: z.number({ error: 'A point needs y in pixels.' }).finite('A point’s y must be a finite number.').min(0, 'A point must lie on the film.').max(100_000, 'A point must lie on the film.'),
  },
  { error: 'A point is { x, y } in pixels of the film.' },
);

/** PUT /api/films/:id/calibration: from the DICOM pixel spacing, or a known length drawn on the film. */
export const FilmCalibrationInput = z.discriminatedUnion(
  'source',
  [
    z.object({ source: z.literal('dicom') }),
    z.object({
      source: z.literal('drawn'),
      a: FilmPointSchema,
      b: FilmPointSchema,
      mm: z
        .number({ error: 'Enter the known length in mm.' })
        .finite('Enter the known length in mm.')
        .positive('The known length must be more than 0 mm.')
        .min(MIN_REFERENCE_MM, `The known length must be at least ${MIN_REFERENCE_MM} mm.`)
        .max(MAX_REFERENCE_MM, `The known length must be at most ${MAX_REFERENCE_MM} mm.`),
    }),
  ],
  { error: 'Calibrate from the DICOM pixel spacing (source "dicom") or from a drawn known length (source "drawn").' },
);
export type FilmCalibrationInput = z.output<typeof FilmCalibrationInput>;

/** PUT /api/films/:id/measurement: the largest lesion diameter (two points) and an optional outline. */
export const FilmMeasurementInput = z.object({
  diameter: z.object({ a: FilmPointSchema, b: FilmPointSchema }, { error: 'Mark the two ends of the largest lesion diameter.' }),
  outline: z.array(FilmPointSchema).min(3, 'An outline needs at least three points.').max(MAX_OUTLINE_POINTS, `An outline has at most ${MAX_OUTLINE_POINTS} points.`).nullish(),
});
export type FilmMeasurementInput = z.output<typeof FilmMeasurementInput>;
