import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { FilmSchema, type Film } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { CalibrationError, pixelAspect, scaleFromDrawnLength, scaleFromPixelSpacing, type FilmPoint, type Scale } from '@/lib/films/calibration';
import { lesionFigures } from '@/lib/films/measure';
import { FilmCalibrationInput, FilmMeasurementInput } from '@/lib/schemas/film';
import { audit } from './audit';
import { NotFoundError, ValidationError } from './errors';
import { calibrationOf, spacingOf, views, type FilmView } from './films';
import { parseInput } from './parse';
import { assertId } from './registry-common';

/**
 * Calibrating a film and measuring the lesion on it (issue 13, viewer and measurement). The maths is
 * pure (lib/films/calibration.ts, lib/films/measure.ts); this stores it with the film. Measuring is
 * scoring work: permission `review.write` (the clinicians). Points are in the original's pixels.
 */

async function liveFilm(em: EntityManager, actor: Actor, filmId: string): Promise<Film> {
  const film = await em.findOne(FilmSchema, { id: assertId(filmId, 'film'), practice: actor.practiceId, archivedAt: null });
  if (!film) throw new NotFoundError('No such film.');
  return film;
}

function onFilm(film: Film, points: readonly FilmPoint[], field: string) {
  const off = points.some((p) => p.x > film.width || p.y > film.height);
  if (off) throw new ValidationError('Some fields need attention.', { [field]: [`Every point must lie on the film (${film.width} × ${film.height} pixels).`] });
}

/** Recomputes a stored measurement's figures with a new scale (a re-calibrated film). */
function refigure(film: Film, scale: Scale) {
  if (!film.lesionDiameter) return;
  const f = lesionFigures(film.lesionDiameter, film.lesionOutline ?? null, scale);
  film.lesionDiameterMm = f.diameterMm;
  film.lesionAreaMm2 = f.areaMm2;
}

/** Sets a film's calibration: from its DICOM pixel spacing, or from a known length drawn on it. */
export async function calibrateFilm(em: EntityManager, actor: Actor, filmId: string, raw: unknown): Promise<FilmView> {
  assertCan(actor, 'review.write');
  const film = await liveFilm(em, actor, filmId);
  const input = parseInput(FilmCalibrationInput, raw);
  const spacing = spacingOf(film);
  let scale: Scale;
  if (input.source === 'dicom') {
    if (!spacing) {
      throw new ValidationError('This film’s file gives no pixel spacing: draw a known length on it instead.', { source: ['The file has no DICOM pixel spacing.'] });
    }
    scale = scaleFromPixelSpacing(spacing);
  } else {
    onFilm(film, [input.a, input.b], 'a');
    try {
      scale = scaleFromDrawnLength(input.a, input.b, input.mm, pixelAspect(spacing));
    } catch (e) {
      if (e instanceof CalibrationError) throw new ValidationError('Some fields need attention.', { a: [e.message[0]!.toUpperCase() + e.message.slice(1) + '.'] });
      throw e;
    }
  }
  film.calibrationSource = input.source;
  film.mmPerPxX = scale.mmPerPxX;
  film.mmPerPxY = scale.mmPerPxY;
  film.calibrationReference = input.source === 'drawn' ? { a: input.a, b: input.b, mm: input.mm } : null;
  film.calibratedAt = new Date();
  refigure(film, scale);
  await em.flush();
  await audit(em, actor, { action: 'film.calibrated', entityType: 'case', entityId: film.case.id, detail: { film: film.id, source: input.source } });
  return (await views(em, [film]))[0]!;
}

/** Stores the largest lesion diameter (two points) and an optional outline on a calibrated film. */
export async function measureFilm(em: EntityManager, actor: Actor, filmId: string, raw: unknown): Promise<FilmView> {
  assertCan(actor, 'review.write');
  const film = await liveFilm(em, actor, filmId);
  const input = parseInput(FilmMeasurementInput, raw);
  const calibration = calibrationOf(film);
  if (!calibration) throw new ValidationError('Calibrate the film first: from its DICOM pixel spacing or a known length drawn on it.', { diameter: ['The film is not calibrated.'] });
  onFilm(film, [input.diameter.a, input.diameter.b], 'diameter');
  if (input.outline) onFilm(film, input.outline, 'outline');
  const outline = input.outline ?? null;
  const figures = lesionFigures(input.diameter, outline, calibration);
  film.lesionDiameter = input.diameter;
  film.lesionOutline = outline;
  film.lesionDiameterMm = figures.diameterMm;
  film.lesionAreaMm2 = figures.areaMm2;
  film.measuredAt = new Date();
  await em.flush();
  await audit(em, actor, { action: 'film.measured', entityType: 'case', entityId: film.case.id, detail: { film: film.id, outline: outline !== null } });
  return (await views(em, [film]))[0]!;
}
