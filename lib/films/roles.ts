/** Film vocabulary shared by the entity, the API and the screens (zod-free: client components import it). */
export const FILM_ROLES = ['pre_operative', 'post_fill', 'follow_up'] as const;
export type FilmRole = (typeof FILM_ROLES)[number];

export const FILM_ROLE_LABELS: Record<FilmRole, string> = {
  pre_operative: 'Pre-operative',
  post_fill: 'Post-fill baseline',
  follow_up: 'Follow-up',
};

export const SPACING_SOURCES = ['pixel_spacing', 'imager_pixel_spacing', 'none'] as const;
export type SpacingSourceCode = (typeof SPACING_SOURCES)[number];

export const SPACING_SOURCE_LABELS: Record<SpacingSourceCode, string> = {
  pixel_spacing: 'DICOM Pixel Spacing',
  imager_pixel_spacing: 'DICOM Imager Pixel Spacing (at the detector)',
  none: 'No pixel spacing in the file',
};

/** The three stored files of a film, as the serving route names them. */
export const FILM_VARIANTS = ['thumbnail', 'web', 'original'] as const;
export type FilmVariant = (typeof FILM_VARIANTS)[number];
