import 'server-only';
import { randomUUID } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import { UniqueConstraintViolationException } from '@mikro-orm/core';
import { FilmSchema, PatientSchema, RecallVisitSchema, UserSchema, type Film } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { dicomPatientMismatch } from '@/lib/films/identity';
import { FilmRejected, processFilm, type ProcessedFilm } from '@/lib/films/process';
import { FILM_ROLE_LABELS, SPACING_SOURCE_LABELS, type FilmRole, type FilmVariant, type SpacingSourceCode } from '@/lib/films/roles';
import { FilmUploadFields } from '@/lib/schemas/film';
import type { FilmCalibration, FilmPoint } from '@/lib/films/calibration';
import { deleteObjects, getObject, getUnchangingObject, putObject } from '@/lib/storage/s3';
import { audit, auditRead } from './audit';
import { NotFoundError, ServiceError, ValidationError } from './errors';
import { UnavailableError } from './unavailable';
import { parseInput } from './parse';
import { assertId, bodyId, findCase, knexOf } from './registry-common';

/** The largest film file accepted (FILM_MAX_MB, default 40 MB); a larger upload is answered 413. */
export const filmMaxBytes = () => env.FILM_MAX_MB * 1024 * 1024;

/** A film as screens and the API see it: never the DICOM patient name or id, never a storage key. */
export interface FilmView {
  id: string;
  caseId: string;
  visitId: string | null;
  reviewId: string | null;
  role: FilmRole;
  roleLabel: string;
  /** PNG, JPEG or DICOM (of the original). */
  format: 'PNG' | 'JPEG' | 'DICOM';
  contentType: string;
  byteSize: number;
  width: number;
  height: number;
  webWidth: number;
  webHeight: number;
  /** [row, column] mm between pixel centres of the original; null when the file gives none. */
  pixelSpacingMm: [number, number] | null;
  spacingSource: SpacingSourceCode;
  spacingSourceLabel: string;
  acquisitionDate: string | null;
  modality: string | null;
  transferSyntax: string | null;
  /** The patient named in the DICOM file does not look like this case's patient. */
  patientMismatch: boolean;
  /** Who uploaded it; null for a film sent by the referring dentist through an upload link. */
  uploadedBy: { id: string; name: string | null } | null;
  /** Sent by the case's referring dentist through an upload link (issue 13). */
  fromReferrer: boolean;
  createdAt: string;
  urls: Record<FilmVariant, string>;
  /** How mm are read off the film (mm per pixel of the original); null until calibrated. */
  calibration: FilmCalibration | null;
  /** The largest lesion diameter (and an optional outline) measured on it; null until measured. */
  measurement: FilmMeasurementView | null;
}

export interface FilmMeasurementView {
  diameter: { a: FilmPoint; b: FilmPoint };
  outline: FilmPoint[] | null;
  diameterMm: number;
  areaMm2: number | null;
  measuredAt: string;
}

/** The film file's own pixel spacing, mm [row, column] (DICOM), or null. */
export function spacingOf(f: Film): [number, number] | null {
  return f.pixelSpacingRowMm != null && f.pixelSpacingColMm != null ? [Number(f.pixelSpacingRowMm), Number(f.pixelSpacingColMm)] : null;
}

/** The calibration stored with a film, as the viewer and the API see it. */
export function calibrationOf(f: Film): FilmCalibration | null {
  if (!f.calibrationSource || f.mmPerPxX == null || f.mmPerPxY == null) return null;
  return { source: f.calibrationSource, mmPerPxX: f.mmPerPxX, mmPerPxY: f.mmPerPxY, reference: f.calibrationReference ?? null };
}

const FORMATS: Record<string, FilmView['format']> = { 'image/png': 'PNG', 'image/jpeg': 'JPEG', 'application/dicom': 'DICOM' };
const EXTENSIONS: Record<string, string> = { 'image/png': 'png', 'image/jpeg': 'jpg', 'application/dicom': 'dcm' };

function view(f: Film, uploader: { id: string; name: string | null } | null): FilmView {
  const spacing = f.pixelSpacingRowMm != null && f.pixelSpacingColMm != null ? ([f.pixelSpacingRowMm, f.pixelSpacingColMm] as [number, number]) : null;
  const acquisition = f.acquisitionDate as unknown;
  return {
    id: f.id,
    caseId: f.case.id,
    visitId: f.visit?.id ?? null,
    reviewId: f.review?.id ?? null,
    role: f.role,
    roleLabel: FILM_ROLE_LABELS[f.role],
    format: FORMATS[f.contentType] ?? 'PNG',
    contentType: f.contentType,
    byteSize: f.byteSize,
    width: f.width,
    height: f.height,
    webWidth: f.webWidth,
    webHeight: f.webHeight,
    pixelSpacingMm: spacing,
    spacingSource: f.spacingSource as SpacingSourceCode,
    spacingSourceLabel: SPACING_SOURCE_LABELS[f.spacingSource as SpacingSourceCode],
    acquisitionDate: acquisition instanceof Date ? acquisition.toISOString().slice(0, 10) : ((acquisition as string | null) ?? null),
    modality: f.modality ?? null,
    transferSyntax: f.transferSyntax ?? null,
    patientMismatch: f.patientMismatch,
    uploadedBy: uploader,
    fromReferrer: f.source === 'referrer',
    createdAt: f.createdAt.toISOString(),
    urls: {
      thumbnail: `/api/films/${f.id}/thumbnail`,
      web: `/api/films/${f.id}/web`,
      original: `/api/films/${f.id}/original`,
    },
    calibration: calibrationOf(f),
    measurement:
      f.lesionDiameter && f.lesionDiameterMm != null && f.measuredAt
        ? { diameter: f.lesionDiameter, outline: f.lesionOutline ?? null, diameterMm: f.lesionDiameterMm, areaMm2: f.lesionAreaMm2 ?? null, measuredAt: f.measuredAt.toISOString() }
        : null,
  };
}

export async function views(em: EntityManager, films: Film[]): Promise<FilmView[]> {
  const ids = [...new Set(films.flatMap((f) => (f.uploadedBy ? [f.uploadedBy.id] : [])))];
  const users = ids.length ? await em.find(UserSchema, { id: { $in: ids } }, { fields: ['id', 'name'] }) : [];
  const names = new Map(users.map((u) => [u.id, u.name ?? null]));
  return films.map((f) => view(f, f.uploadedBy ? { id: f.uploadedBy.id, name: names.get(f.uploadedBy.id) ?? null } : null));
}

/** The live films of a case, newest first. Audited as a read. */
export async function listFilms(em: EntityManager, actor: Actor, caseId: string): Promise<{ films: FilmView[]; maxBytes: number }> {
  assertCan(actor, 'film.read');
  const c = await findCase(em, actor, caseId);
  const films = await em.find(FilmSchema, { case: c.id, practice: actor.practiceId, archivedAt: null }, { orderBy: { createdAt: 'desc', id: 'asc' } });
  await auditRead(em, actor, { action: 'film.list', entityType: 'case', entityId: c.id, detail: { films: films.length } });
  return { films: await views(em, films), maxBytes: filmMaxBytes() };
}

export interface FilmUploadResult {
  film: FilmView;
  /** False when the same file was already stored for this case and role (a retried upload). */
  created: boolean;
}

const NO_SUCH_VISIT = 'Choose a recall visit of this case.';

/** Why an upload was refused, as the API's stable error code. */
const CODE_OF_STATUS = { 413: 'payload_too_large', 415: 'unsupported_media_type', 422: 'validation' } as const;

/**
 * Stores one film of a case: checks the file by its content, reads and renders it
 * (lib/films/process.ts), writes the three objects, then the row. A retry of the same file for the
 * same case and role returns the film already stored (unique per case, role and sha256). No
 * orphans: objects written before a failed row insert are removed, and no row is written unless
 * every object was.
 */
export async function uploadFilm(
  em: EntityManager,
  actor: Actor,
  caseId: string,
  fields: unknown,
  bytes: Uint8Array | null,
): Promise<FilmUploadResult> {
  assertCan(actor, 'film.upload');
  const c = await findCase(em, actor, caseId);
  const input = parseInput(FilmUploadFields, fields);
  if (!bytes) throw new ValidationError('Some fields need attention.', { file: ['Choose a film to upload (PNG, JPEG or DICOM).'] });
  let visitId: string | null = null;
  if (input.visitId) {
    const visit = await em.findOne(RecallVisitSchema, { id: bodyId(input.visitId, 'visitId', NO_SUCH_VISIT), case: c.id, practice: actor.practiceId }, { fields: ['id'] });
    if (!visit) throw new ValidationError('Some fields need attention.', { visitId: [NO_SUCH_VISIT] });
    visitId = visit.id;
  }

  const processed = await checkFilm(bytes);

  const existing = await findLive(em, c.id, input.role, processed.sha256);
  if (existing) return repeated(em, actor, existing);

  const patient = await em.findOneOrFail(PatientSchema, { id: c.patient.id }, { fields: ['id', 'givenName', 'familyName', 'registryNumber'] });
  const stored = await storeFilmObjects(actor.practiceId, c.id, processed);
  const keys = stored.keys;
  const film = em.create(FilmSchema, {
    ...filmRowData(stored, processed, patient),
    practice: actor.practiceId,
    case: c.id,
    visit: visitId,
    role: input.role,
    uploadedBy: actor.userId,
  });
  try {
    await em.persist(film).flush();
  } catch (e) {
    await removeQuietly(Object.values(keys));
    em.clear();
    if (e instanceof UniqueConstraintViolationException) {
      // The same file for the same case and role arrived twice at once: the other upload won.
      const winner = await findLive(em, c.id, input.role, processed.sha256);
      if (winner) return repeated(em, actor, winner);
    }
    throw e;
  }
  await audit(em, actor, {
    action: 'film.uploaded',
    entityType: 'case',
    entityId: c.id,
    detail: { film: film.id, role: film.role, format: FORMATS[film.contentType], bytes: film.byteSize, ...(film.patientMismatch ? { patientMismatch: true } : {}) },
  });
  return { film: (await views(em, [film]))[0]!, created: true };
}

/** Checks and renders an uploaded file (lib/films/process.ts); a refused file is a 413/415/422 naming why. */
export async function checkFilm(bytes: Uint8Array): Promise<ProcessedFilm> {
  try {
    return await processFilm(bytes, filmMaxBytes());
  } catch (e) {
    if (e instanceof FilmRejected) {
      throw new ServiceError(e.message, e.status, { file: [e.message] }, CODE_OF_STATUS[e.status]);
    }
    throw e;
  }
}

export interface StoredFilmObjects {
  filmId: string;
  keys: { original: string; web: string; thumbnail: string };
}

/** What an upload answers when the object store does not take its files (503 `unavailable`, Retry-After). */
export const FILM_STORE_UNAVAILABLE = 'The film store is not answering: nothing was kept. Try the upload again in a moment.';

/**
 * Writes a checked film's three objects under a fresh film id (before its row: a row never names
 * a missing object). A failed write removes what was written and answers 503 `unavailable` with a
 * Retry-After hint (UnavailableError); what could not be removed (the store being down) is left to
 * the storage sweep (lib/services/storage-sweep.ts), which removes objects with no row once they
 * are older than its grace period.
 */
export async function storeFilmObjects(practiceId: string, caseId: string, processed: ProcessedFilm): Promise<StoredFilmObjects> {
  const filmId = randomUUID();
  const prefix = `practices/${practiceId}/cases/${caseId}/films/${filmId}`;
  const keys = {
    original: `${prefix}/original.${EXTENSIONS[processed.contentType]}`,
    web: `${prefix}/web.${EXTENSIONS[processed.web.contentType]}`,
    thumbnail: `${prefix}/thumbnail.${EXTENSIONS[processed.thumbnail.contentType]}`,
  };
  try {
    await Promise.all([
      putObject({ key: keys.original, body: processed.original.body, contentType: processed.original.contentType }),
      putObject({ key: keys.web, body: processed.web.body, contentType: processed.web.contentType }),
      putObject({ key: keys.thumbnail, body: processed.thumbnail.body, contentType: processed.thumbnail.contentType }),
    ]);
  } catch (e) {
    await removeQuietly(Object.values(keys));
    console.error('[films] object storage refused a write', (e as Error)?.name ?? 'error');
    throw new UnavailableError(FILM_STORE_UNAVAILABLE);
  }
  return { filmId, keys };
}

/** The columns of a film row that come from the file and its stored objects. */
export function filmRowData(stored: StoredFilmObjects, processed: ProcessedFilm, patient: { givenName: string; familyName: string; registryNumber: string }) {
  const dicom = processed.dicom;
  return {
    id: stored.filmId,
    originalKey: stored.keys.original,
    webKey: stored.keys.web,
    thumbnailKey: stored.keys.thumbnail,
    contentType: processed.contentType,
    byteSize: processed.byteSize,
    sha256: processed.sha256,
    width: processed.width,
    height: processed.height,
    webWidth: processed.web.width,
    webHeight: processed.web.height,
    pixelSpacingRowMm: dicom?.pixelSpacingMm?.[0] ?? null,
    pixelSpacingColMm: dicom?.pixelSpacingMm?.[1] ?? null,
    spacingSource: dicom?.spacingSource ?? ('none' as const),
    acquisitionDate: dicom?.acquisitionDate ?? null,
    modality: dicom?.modality ?? null,
    transferSyntax: dicom?.transferSyntaxUid ?? null,
    dicomPatientName: dicom?.patientName ?? null,
    dicomPatientId: dicom?.patientId ?? null,
    patientMismatch: dicom ? dicomPatientMismatch(patient, dicom.patientName, dicom.patientId) : false,
  };
}

function findLive(em: EntityManager, caseId: string, role: FilmRole, sha256: string) {
  return em.findOne(FilmSchema, { case: caseId, role, sha256, archivedAt: null });
}

async function repeated(em: EntityManager, actor: Actor, film: Film): Promise<FilmUploadResult> {
  await audit(em, actor, { action: 'film.upload_repeated', entityType: 'case', entityId: film.case.id, detail: { film: film.id, role: film.role } });
  return { film: (await views(em, [film]))[0]!, created: false };
}

export async function removeQuietly(keys: string[]) {
  try {
    await deleteObjects(keys);
  } catch {
    console.error('[films] could not remove objects of a failed upload', keys.length);
  }
}

export interface FilmFile {
  body: Uint8Array;
  contentType: string;
  filename: string;
  /** The original opens as a download; the renditions show in the page. */
  disposition: 'inline' | 'attachment';
}

/** One stored file of a film (thumbnail, web rendition or original), for the serving route. Every view is audited. */
export async function readFilmFile(em: EntityManager, actor: Actor, filmId: string, variant: FilmVariant): Promise<FilmFile> {
  assertCan(actor, 'film.read');
  // the few columns serving needs, read plainly (no entity: a thumbnail is the busiest read of a film)
  const film = (await knexOf(em)('film')
    .where({ id: assertId(filmId, 'film'), practice_id: actor.practiceId, archived_at: null })
    .first('id', 'case_id', 'thumbnail_key', 'web_key', 'original_key', 'content_type')) as
    | { id: string; case_id: string; thumbnail_key: string; web_key: string; original_key: string; content_type: string }
    | undefined;
  if (!film) throw new NotFoundError('No such film.');
  const key = variant === 'thumbnail' ? film.thumbnail_key : variant === 'web' ? film.web_key : film.original_key;
  const body = variant === 'original' ? await getObject(key) : await getUnchangingObject(key);
  if (!body) throw new NotFoundError('The film’s file is missing from storage.');
  await auditRead(em, actor, { action: 'film.viewed', entityType: 'case', entityId: film.case_id, detail: { film: film.id, variant } });
  const contentType =
    variant === 'thumbnail' ? 'image/jpeg' : variant === 'web' ? (film.web_key.endsWith('.png') ? 'image/png' : 'image/jpeg') : film.content_type;
  return {
    body,
    contentType,
    filename: `film-${film.id.slice(0, 8)}-${variant}.${EXTENSIONS[contentType]}`,
    disposition: variant === 'original' ? 'attachment' : 'inline',
  };
}
