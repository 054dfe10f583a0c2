import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { FILM_ROLES, SPACING_SOURCES } from '../lib/films/roles';
import { CALIBRATION_SOURCES, type DrawnReference, type FilmPoint } from '../lib/films/calibration';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { ReferrerUploadLinkSchema } from './ReferrerUploadLink';
import { ReviewSchema } from './Review';
import { TreatmentCaseSchema } from './TreatmentCase';
import { UserSchema } from './User';

/**
 * A radiograph of a case (issue 13): pre-operative, post-fill baseline or follow-up (at a recall
 * visit, optionally tied to the review that scored it). The bytes live in object storage
 * (lib/storage/s3.ts) under three keys: the original (a DICOM file as uploaded; a PNG/JPEG
 * re-encoded without its metadata), the web rendition and the thumbnail (lib/films/process.ts).
 *
 * `sha256` is of the uploaded bytes: one live film per case, role and content (a retried upload
 * returns the film already stored). Pixel spacing is [row, column] in mm between pixel centres of
 * the original, with its source; `webWidth`/`webHeight` may be smaller than `width`/`height` (a
 * rendition is at most 4096 px on its long side). The DICOM patient name and id are kept only to
 * compare with the case's patient (`patientMismatch`), never sent to a screen.
 */
export const FilmSchema = defineEntity({
  name: 'Film',
  tableName: 'film',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    case: p.manyToOne(TreatmentCaseSchema).ref().deleteRule('cascade'),
    visit: p.manyToOne(RecallVisitSchema).ref().nullable().deleteRule('set null').default(null),
    review: p.manyToOne(ReviewSchema).ref().nullable().deleteRule('set null').default(null),
    role: p.enum([...FILM_ROLES]),
    originalKey: p.string().length(200),
    webKey: p.string().length(200),
    thumbnailKey: p.string().length(200),
    /** Of the original: image/png, image/jpeg or application/dicom. */
    contentType: p.string().length(40),
    byteSize: p.integer(),
    sha256: p.string().length(64),
    width: p.integer(),
    height: p.integer(),
    webWidth: p.integer(),
    webHeight: p.integer(),
    pixelSpacingRowMm: p.double().nullable().default(null),
    pixelSpacingColMm: p.double().nullable().default(null),
    spacingSource: p.enum([...SPACING_SOURCES]).default('none'),
    acquisitionDate: p.date().nullable().default(null),
    modality: p.string().length(16).nullable().default(null),
    transferSyntax: p.string().length(64).nullable().default(null),
    dicomPatientName: p.string().length(200).nullable().default(null),
    dicomPatientId: p.string().length(64).nullable().default(null),
    patientMismatch: p.boolean().default(false),
    /** Who uploaded it; null for a film sent by a referrer through an upload link (`source` referrer). */
    uploadedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('restrict').default(null),
    /** practice: uploaded by a signed-in user; referrer: sent by the referring dentist through `referrerLink`. */
    source: p.enum(['practice', 'referrer'] as const).default('practice'),
    referrerLink: p.manyToOne(ReferrerUploadLinkSchema).ref().nullable().deleteRule('set null').default(null),
    /** Calibration (Migration20261202190000): mm per pixel of the original, across (x) and down (y). */
    calibrationSource: p.enum([...CALIBRATION_SOURCES]).nullable().default(null),
    mmPerPxX: p.double().$type<number>().nullable(),
    mmPerPxY: p.double().$type<number>().nullable(),
    calibrationReference: p.json<DrawnReference>().nullable(),
    calibratedAt: p.datetime().nullable().default(null),
    /** The largest lesion diameter's two ends and an optional outline (original pixels), and their figures. */
    lesionDiameter: p.json<{ a: FilmPoint; b: FilmPoint }>().nullable(),
    lesionOutline: p.json<FilmPoint[]>().nullable(),
    lesionDiameterMm: p.double().$type<number>().nullable(),
    lesionAreaMm2: p.double().$type<number>().nullable(),
    measuredAt: p.datetime().nullable().default(null),
    createdAt: p.datetime().onCreate(() => new Date()),
    archivedAt: p.datetime().nullable().default(null),
  },
  // Declared for the schema diff; written by Migration20261202190000 / …210000.
  checks: [
    {
      name: 'film_calibration_complete',
      expression:
        '((calibration_source IS NULL) = (mm_per_px_x IS NULL)) AND ((mm_per_px_x IS NULL) = (mm_per_px_y IS NULL)) AND ((mm_per_px_x IS NULL) OR ((mm_per_px_x > (0)::double precision) AND (mm_per_px_y > (0)::double precision)))',
    },
    { name: 'film_measurement_calibrated', expression: '"lesion_diameter_mm" is null or "calibration_source" is not null' },
    { name: 'film_source_uploader_check', expression: '("source" = \'referrer\') = ("uploaded_by_id" is null)' },
  ],
  indexes: [
    { name: 'film_case_index', properties: ['case', 'createdAt'] },
    { name: 'film_visit_index', properties: ['visit'] },
  ],
  uniques: [
    {
      name: 'film_case_role_sha256_live_unique',
      expression: 'create unique index "film_case_role_sha256_live_unique" on "film" ("case_id", "role", "sha256") where "archived_at" is null',
    },
  ],
});

export type Film = InferEntity<typeof FilmSchema>;
