import { z } from 'zod';
import { FILM_ROLES, FILM_ROLE_LABELS, FILM_VARIANTS } from '@/lib/films/roles';

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
