import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { LockMode } from '@mikro-orm/core';
import {
  FilmReadingSchema,
  FilmSchema,
  MembershipSchema,
  PracticeSchema,
  ReferenceFilmSchema,
  ReviewSchema,
  TreatmentCaseSchema,
  UserSchema,
  type Film,
  type FilmReading,
} from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { can } from '@/lib/auth/permissions';
import {
  PAI_SCALE,
  READING_KIND_LABELS,
  calibration,
  filmReadingState,
  firstReadingMeansDisease,
  needsSecondReading,
  readerPairAgreement,
  type CalibrationResult,
  type FilmReadingRow,
  type FilmReadingState,
  type PairAgreement,
  type ReadingKind,
} from '@/lib/reading/rules';
import { QueueQuery, ReadingInput, ReferenceInput } from '@/lib/schemas/reading';
import type { ReviewSign } from '@/lib/schemas/review';
import { SCORING_CAUTION } from '@/lib/scoring';
import { getObject } from '@/lib/storage/s3';
import { audit } from './audit';
import { ConflictError, NotFoundError, ServiceError } from './errors';
import { calibrationOf, spacingOf } from './films';
import { parseInput } from './parse';
import { applyAgreedPai } from './reviews';
import { assertId, practiceSettings, todayIn } from './registry-common';

/**
 * The reading queue (issue 13). A follow-up film (role follow_up, not archived) is read first by a
 * clinician; lib/reading/rules.ts decides whether a blinded second reading follows (every first
 * reading that means disease by lib/scoring, plus the practice's share chosen by a hash of the film
 * id), whether the two need adjudication (more than one PAI step apart: a third clinician, or the
 * lead's consensus entry) and the agreed score. Every reading is a new `film_reading` row.
 *
 * The film's review: `film.review` when the film was tied to one, else the current review recorded
 * at the film's recall visit (`film.visit`). Once the readings agree, the agreed PAI becomes that
 * review's score through lib/services/reviews `applyAgreedPai` (a correction: the earlier version
 * kept). A film with no review yet keeps its agreed score in its readings only.
 *
 * Blinding is enforced here: `blindedFilm` and `blindedImage` answer only a reader who has a
 * blinded task on the film (second reading, adjudication, calibration exercise) and return the
 * film and its calibration, nothing else.
 */

export type TaskKind = ReadingKind;

/** The calibration the blinded reader may see: mm per pixel of the web rendition, or null. */
export interface FilmCalibration {
  /** [row, column] mm between pixel centres of the image the reader sees. */
  mmPerPixel: [number, number] | null;
}

/** EXACTLY what a blinded reader gets (tests/integration/readings.test.ts checks the keys). */
export interface BlindedFilm {
  filmId: string;
  imageUrl: string;
  width: number;
  height: number;
  calibration: FilmCalibration;
}

export interface QueueItem {
  filmId: string;
  task: TaskKind;
  taskLabel: string;
  /** When the film was filed (ISO). */
  filedAt: string;
  /** First reading only: the reader treats the case, so the film comes with its case. */
  film?: { id: string; imageUrl: string; width: number; height: number; calibration: FilmCalibration };
  case?: { id: string; tooth: number };
  /** Adjudication only: the two scores to settle (no reader named). */
  scores?: [number, number];
  /** Adjudication by the lead is a consensus entry. */
  consensus?: boolean;
}

export interface ReadingQueue {
  scope: 'mine' | 'practice';
  items: QueueItem[];
  counts: Record<FilmReadingState['status'], number>;
  /** Calibration-exercise films waiting for this reader. */
  exercise: number;
  caution: string;
}

interface Loaded {
  films: Film[];
  cases: Map<string, { id: string; tooth: number; operator: string; completionDate: string | null; paiScore: number }>;
  readings: Map<string, FilmReading[]>;
  reference: Map<string, number>;
  percent: number;
  minObservationDays: number;
}

function rowsOf(readings: readonly FilmReading[]): FilmReadingRow[] {
  return readings.map((r) => ({ kind: r.kind as ReadingKind, readerId: r.reader.id, pai: r.pai, at: r.createdAt.toISOString() }));
}

/**
 * mm per pixel of the web rendition [row, column]: the clinician's stored calibration (from the DICOM
 * spacing or a known length, as the viewer sets it) when there is one, otherwise the file's own pixel
 * spacing; null when neither exists.
 */
function readerCalibration(f: Film): FilmCalibration {
  if (!f.webWidth || !f.webHeight) return { mmPerPixel: null };
  const stored = calibrationOf(f);
  const perOriginalPx = stored ? [stored.mmPerPxY, stored.mmPerPxX] : spacingOf(f);
  if (!perOriginalPx) return { mmPerPixel: null };
  const round = (v: number) => Math.round(v * 1e6) / 1e6;
  return { mmPerPixel: [round(perOriginalPx[0]! * (f.height / f.webHeight)), round(perOriginalPx[1]! * (f.width / f.webWidth))] };
}

function filmDate(f: Film): string {
  const a = f.acquisitionDate as unknown;
  if (a instanceof Date) return a.toISOString().slice(0, 10);
  if (typeof a === 'string' && a) return a.slice(0, 10);
  return f.createdAt.toISOString().slice(0, 10);
}

/** The state of one film's readings by the rules, with this practice's share and observation time. */
function stateOf(l: Loaded, f: Film): FilmReadingState {
  const readings = l.readings.get(f.id) ?? [];
  const first = [...readings].filter((r) => r.kind === 'first').sort((a, b) => new Date(a.createdAt).getTime() - new Date(b.createdAt).getTime())[0];
  const c = l.cases.get(f.case.id);
  return filmReadingState(rowsOf(readings), (firstPai) =>
    needsSecondReading(
      f.id,
      l.percent,
      !!c &&
        firstReadingMeansDisease({
          case: { completionDate: c.completionDate, baselinePai: c.paiScore },
          filmDate: filmDate(f),
          pai: firstPai,
          signs: (first?.signs ?? {}) as Partial<Record<ReviewSign, boolean>>,
          minObservationDays: l.minObservationDays,
        }),
    ),
  );
}

async function load(em: EntityManager, practiceId: string, filmIds?: string[]): Promise<Loaded> {
  const where = { practice: practiceId, role: 'follow_up' as const, archivedAt: null, ...(filmIds ? { id: { $in: filmIds } } : {}) };
  const [films, practice, settings, reference] = await Promise.all([
    em.find(FilmSchema, where, { orderBy: { createdAt: 'asc', id: 'asc' } }),
    em.findOneOrFail(PracticeSchema, practiceId, { fields: ['id', 'secondReadingPercent'] }),
    practiceSettings(em, practiceId),
    em.find(ReferenceFilmSchema, { practice: practiceId }),
  ]);
  const caseIds = [...new Set(films.map((f) => f.case.id))];
  const ids = films.map((f) => f.id);
  const [cases, readings] = await Promise.all([
    caseIds.length
      ? em.find(TreatmentCaseSchema, { id: { $in: caseIds }, practice: practiceId }, { fields: ['id', 'tooth', 'operator', 'completionDate', 'paiScore'] })
      : [],
    ids.length ? em.find(FilmReadingSchema, { film: { $in: ids }, practice: practiceId }, { orderBy: { createdAt: 'asc' } }) : [],
  ]);
  const byFilm = new Map<string, FilmReading[]>();
  for (const r of readings) byFilm.set(r.film.id, [...(byFilm.get(r.film.id) ?? []), r]);
  return {
    films,
    cases: new Map(cases.map((c) => [c.id, { id: c.id, tooth: c.tooth, operator: c.operator.id, completionDate: c.completionDate ?? null, paiScore: c.paiScore }])),
    readings: byFilm,
    reference: new Map(reference.map((r) => [r.film.id, r.pai])),
    percent: practice.secondReadingPercent,
    minObservationDays: settings.minObservationDays,
  };
}

/** The blinded task this actor has on a film, or null. */
function blindedTask(actor: Actor, l: Loaded, f: Film, today: string): 'second' | 'adjudication' | 'reference-exercise' | null {
  const state = stateOf(l, f);
  const clinician = can(actor.roles, 'reading.score');
  const readers = new Set([state.firstReaderId, state.secondReaderId].filter(Boolean));
  if (state.status === 'awaiting-second' && clinician && state.firstReaderId !== actor.userId) return 'second';
  if (state.status === 'awaiting-adjudication' && ((clinician && !readers.has(actor.userId)) || can(actor.roles, 'reading.lead'))) return 'adjudication';
  if (clinician && l.reference.has(f.id) && !exercisedWithinYear(l, f.id, actor.userId, today)) return 'reference-exercise';
  return null;
}

function exercisedWithinYear(l: Loaded, filmId: string, userId: string, today: string): boolean {
  const since = new Date(Date.parse(`${today}T00:00:00Z`) - 365 * 86_400_000);
  return (l.readings.get(filmId) ?? []).some((r) => r.kind === 'reference-exercise' && r.reader.id === userId && r.createdAt >= since);
}

function imageOf(f: Film) {
  return { id: f.id, imageUrl: `/api/films/${f.id}/web`, width: f.webWidth, height: f.webHeight, calibration: readerCalibration(f) };
}

/** The films waiting for this reader (scope mine) or for anyone (scope practice). Audited. */
export async function readingQueue(em: EntityManager, actor: Actor, raw: unknown): Promise<ReadingQueue> {
  assertCan(actor, 'reading.queue');
  const { scope } = parseInput(QueueQuery, raw ?? {});
  const { timeZone } = await practiceSettings(em, actor.practiceId);
  const today = todayIn(timeZone);
  const l = await load(em, actor.practiceId);
  const counts: ReadingQueue['counts'] = { 'awaiting-first': 0, 'awaiting-second': 0, 'awaiting-adjudication': 0, agreed: 0 };
  const items: QueueItem[] = [];
  const clinician = can(actor.roles, 'reading.score');
  let exercise = 0;
  for (const f of l.films) {
    const state = stateOf(l, f);
    counts[state.status]++;
    const c = l.cases.get(f.case.id);
    const base = { filmId: f.id, filedAt: f.createdAt.toISOString() };
    if (state.status === 'awaiting-first' && clinician && (scope === 'practice' || c?.operator === actor.userId)) {
      items.push({ ...base, task: 'first', taskLabel: READING_KIND_LABELS.first, film: imageOf(f), case: c ? { id: c.id, tooth: c.tooth } : undefined });
      continue;
    }
    const task = blindedTask(actor, l, f, today);
    if (!task) continue;
    if (task === 'reference-exercise') exercise++;
    const item: QueueItem = { ...base, task, taskLabel: READING_KIND_LABELS[task] };
    if (task === 'adjudication') {
      const rows = l.readings.get(f.id) ?? [];
      const first = rows.find((r) => r.kind === 'first')!;
      const second = rows.find((r) => r.kind === 'second')!;
      item.scores = [first.pai, second.pai];
      item.consensus = !clinician || (!!state.firstReaderId && [state.firstReaderId, state.secondReaderId].includes(actor.userId));
    }
    items.push(item);
  }
  const order: Record<TaskKind, number> = { adjudication: 0, second: 1, first: 2, 'reference-exercise': 3 };
  items.sort((a, b) => order[a.task] - order[b.task] || a.filedAt.localeCompare(b.filedAt));
  await audit(em, actor, { action: 'reading.queue_read', detail: { scope, items: items.length } });
  return { scope, items, counts, exercise, caution: SCORING_CAUTION };
}

async function loadOne(em: EntityManager, actor: Actor, filmId: string) {
  const id = assertId(filmId, 'film');
  const l = await load(em, actor.practiceId, [id]);
  const f = l.films[0];
  if (!f) throw new NotFoundError('No such film waiting to be read.');
  return { l, f };
}

/**
 * A film for a blinded reading: its id, an image URL, the image's size and its calibration —
 * nothing about the patient, the case, earlier scores or readers. 404 unless the actor has a
 * blinded task on it (a first reader never has the second reading of their own film). Audited.
 */
export async function blindedFilm(em: EntityManager, actor: Actor, filmId: string): Promise<BlindedFilm> {
  assertCan(actor, 'reading.queue');
  const { l, f } = await loadOne(em, actor, filmId);
  const { timeZone } = await practiceSettings(em, actor.practiceId);
  const task = blindedTask(actor, l, f, todayIn(timeZone));
  if (!task) throw new NotFoundError('No blinded reading of this film is waiting for you.');
  await audit(em, actor, { action: 'reading.blinded_viewed', entityType: 'case', entityId: f.case.id, detail: { film: f.id, task } });
  return { filmId: f.id, imageUrl: `/api/reading/blinded/${f.id}/image`, width: f.webWidth, height: f.webHeight, calibration: readerCalibration(f) };
}

/** The web rendition for a blinded reader: same check as blindedFilm; named neutrally by the route. Audited. */
export async function blindedImage(em: EntityManager, actor: Actor, filmId: string): Promise<{ body: Uint8Array; contentType: string }> {
  assertCan(actor, 'reading.queue');
  const { l, f } = await loadOne(em, actor, filmId);
  const { timeZone } = await practiceSettings(em, actor.practiceId);
  const task = blindedTask(actor, l, f, todayIn(timeZone));
  if (!task) throw new NotFoundError('No blinded reading of this film is waiting for you.');
  const body = await getObject(f.webKey);
  if (!body) throw new NotFoundError('The film’s file is missing from storage.');
  await audit(em, actor, { action: 'film.viewed', entityType: 'case', entityId: f.case.id, detail: { film: f.id, variant: 'web', blinded: true } });
  return { body, contentType: f.webKey.endsWith('.png') ? 'image/png' : 'image/jpeg' };
}

export interface ReadingRecorded {
  id: string;
  kind: TaskKind;
  pai: number;
  /** First readings and adjudications: what happens next ("awaiting-second", "agreed"). A blinded second reader learns nothing. */
  status?: FilmReadingState['status'];
  /** When the readings agreed and the film's review took the agreed PAI (a correction). */
  reviewCorrected?: string | null;
}

/**
 * Records a reading. The film's row is locked for the check and the insert, so two readers cannot
 * both take the same step. First: a clinician, while no first reading exists. Second: a clinician
 * other than the first reader, while a second reading is due. Adjudication: a clinician who read
 * neither, or the lead (a consensus entry). Calibration exercise: a clinician, on a reference film.
 * Once the readings agree, the agreed PAI goes to the film's review. Audited.
 */
export async function recordReading(em: EntityManager, actor: Actor, filmId: string, raw: unknown): Promise<ReadingRecorded> {
  assertCan(actor, 'reading.queue');
  const id = assertId(filmId, 'film');
  const input = parseInput(ReadingInput, raw);
  const { timeZone } = await practiceSettings(em, actor.practiceId);
  const today = todayIn(timeZone);
  return em.transactional(async (tem) => {
    const locked = await tem.findOne(FilmSchema, { id, practice: actor.practiceId, role: 'follow_up', archivedAt: null }, { lockMode: LockMode.PESSIMISTIC_WRITE, fields: ['id'] });
    if (!locked) throw new NotFoundError('No such film waiting to be read.');
    const l = await load(tem, actor.practiceId, [id]);
    const f = l.films[0]!;
    const state = stateOf(l, f);
    const clinician = can(actor.roles, 'reading.score');
    let consensus = false;
    if (input.kind === 'first') {
      assertCan(actor, 'reading.score');
      if (state.status !== 'awaiting-first') throw new ConflictError('This film has its first reading already.');
    } else if (input.kind === 'reference-exercise') {
      assertCan(actor, 'reading.score');
      if (!l.reference.has(f.id)) throw new ConflictError('This film is not in the reference set.');
    } else {
      const task = blindedTask(actor, l, f, today);
      if (task !== input.kind) {
        throw new ConflictError(
          input.kind === 'second' && state.firstReaderId === actor.userId
            ? 'You gave this film its first reading: its second reading is another clinician’s.'
            : `No ${READING_KIND_LABELS[input.kind].toLowerCase()} of this film is waiting for you.`,
        );
      }
      if (input.kind === 'adjudication') consensus = !clinician || [state.firstReaderId, state.secondReaderId].includes(actor.userId);
    }
    const reading = tem.create(FilmReadingSchema, {
      practice: actor.practiceId,
      film: f.id,
      reader: actor.userId,
      kind: input.kind,
      pai: input.pai,
      signs: input.kind === 'first' ? input.signs : {},
      consensus,
    });
    await tem.persist(reading).flush();
    await audit(tem, actor, {
      action: 'reading.recorded',
      entityType: 'case',
      entityId: f.case.id,
      detail: { film: f.id, kind: input.kind, pai: input.pai, ...(consensus ? { consensus: true } : {}) },
    });
    l.readings.set(f.id, [...(l.readings.get(f.id) ?? []), reading]);
    const after = stateOf(l, f);
    let reviewCorrected: string | null = null;
    if (input.kind !== 'reference-exercise' && state.status !== 'agreed' && after.status === 'agreed') {
      reviewCorrected = await settle(tem, actor, f, after);
    }
    const result: ReadingRecorded = { id: reading.id, kind: input.kind, pai: input.pai };
    if (input.kind === 'first' || input.kind === 'adjudication') Object.assign(result, { status: after.status, reviewCorrected });
    return result;
  });
}

/** The film's review (see the top of this file), or null. */
async function reviewOf(em: EntityManager, f: Film): Promise<string | null> {
  if (f.review) {
    // follow corrections to the current version
    let r = await em.findOne(ReviewSchema, { id: f.review.id }, { fields: ['id', 'supersededBy'] });
    for (let hops = 0; r?.supersededBy && hops < 50; hops++) r = await em.findOne(ReviewSchema, { id: r.supersededBy.id }, { fields: ['id', 'supersededBy'] });
    return r?.id ?? null;
  }
  if (!f.visit) return null;
  const r = await em.findOne(ReviewSchema, { visit: f.visit.id, case: f.case.id, supersededBy: null }, { fields: ['id'], orderBy: { createdAt: 'desc' } });
  return r?.id ?? null;
}

async function settle(em: EntityManager, actor: Actor, f: Film, state: FilmReadingState): Promise<string | null> {
  const reviewId = await reviewOf(em, f);
  const why = state.basis === 'adjudication' ? 'adjudication' : state.basis === 'first-within-one-step' ? 'first and blinded second reading within one step' : 'first reading';
  let corrected: Awaited<ReturnType<typeof applyAgreedPai>> = null;
  let reviewProblem: string | null = null;
  if (reviewId) {
    try {
      corrected = await applyAgreedPai(em, actor, reviewId, state.agreedPai!, `Agreed PAI ${state.agreedPai} from the film’s readings (${why}).`);
    } catch (e) {
      // e.g. PAI 4 agreed on a review that recorded no lesion: the readings stand, the clinician corrects the review
      if (!(e instanceof ServiceError) || e.status >= 500) throw e;
      reviewProblem = e.fieldErrors ? Object.values(e.fieldErrors).flat().join(' ') || e.message : e.message;
    }
  }
  await audit(em, actor, {
    action: 'reading.agreed',
    entityType: 'case',
    entityId: f.case.id,
    detail: { film: f.id, pai: state.agreedPai, basis: state.basis, review: reviewId, corrected: corrected?.review.id ?? null, ...(reviewProblem ? { reviewNotCorrected: reviewProblem } : {}) },
  });
  return corrected?.review.id ?? null;
}

/** Puts a film in the practice's reference set with a reference PAI, changes it, or (pai null) takes it out. Lead only. Audited. */
export async function setReferenceFilm(em: EntityManager, actor: Actor, filmId: string, raw: unknown): Promise<{ filmId: string; pai: number | null }> {
  assertCan(actor, 'reading.lead');
  const id = assertId(filmId, 'film');
  const { pai } = parseInput(ReferenceInput, raw);
  const film = await em.findOne(FilmSchema, { id, practice: actor.practiceId, archivedAt: null }, { fields: ['id', 'case'] });
  if (!film) throw new NotFoundError('No such film.');
  const existing = await em.findOne(ReferenceFilmSchema, { film: id, practice: actor.practiceId });
  if (pai === null) {
    if (existing) {
      await em.remove(existing).flush();
      await audit(em, actor, { action: 'reading.reference_removed', entityType: 'case', entityId: film.case.id, detail: { film: id } });
    }
    return { filmId: id, pai: null };
  }
  if (existing) {
    const before = existing.pai;
    existing.pai = pai;
    em.assign(existing, { setBy: actor.userId });
    await em.flush();
    await audit(em, actor, { action: 'reading.reference_set', entityType: 'case', entityId: film.case.id, detail: { film: id, pai, before } });
  } else {
    em.create(ReferenceFilmSchema, { film: id, practice: actor.practiceId, pai, setBy: actor.userId });
    await em.flush();
    await audit(em, actor, { action: 'reading.reference_set', entityType: 'case', entityId: film.case.id, detail: { film: id, pai } });
  }
  return { filmId: id, pai };
}

export interface AgreementView {
  pairs: (PairAgreement & { names: [string, string] })[];
  calibration: (CalibrationResult & { name: string })[];
  reference: { filmId: string; pai: number; thumbnailUrl: string }[];
  /** Agreed films not in the reference set, newest first (candidates for it). */
  candidates: { filmId: string; agreedPai: number; thumbnailUrl: string }[];
  counts: Record<FilmReadingState['status'], number>;
  secondReadingPercent: number;
  scale: readonly number[];
  method: string;
  caution: string;
  today: string;
}

/** Weighted kappa per reader pair and each clinician's calibration against the reference set. Lead only. Audited. */
export async function readingAgreement(em: EntityManager, actor: Actor): Promise<AgreementView> {
  assertCan(actor, 'reading.lead');
  const { timeZone } = await practiceSettings(em, actor.practiceId);
  const today = todayIn(timeZone);
  const l = await load(em, actor.practiceId);
  const referenceRows = await em.find(ReferenceFilmSchema, { practice: actor.practiceId });
  const referenceFilms = referenceRows.map((r) => r.film.id);
  // reference films may be of any role: their exercise readings are read apart
  const exerciseRows = referenceFilms.length
    ? await em.find(FilmReadingSchema, { practice: actor.practiceId, kind: 'reference-exercise', film: { $in: referenceFilms } })
    : [];
  const counts: AgreementView['counts'] = { 'awaiting-first': 0, 'awaiting-second': 0, 'awaiting-adjudication': 0, agreed: 0 };
  const paired: { first: { readerId: string; pai: number }; second: { readerId: string; pai: number } }[] = [];
  const candidates: AgreementView['candidates'] = [];
  for (const f of l.films) {
    const state = stateOf(l, f);
    counts[state.status]++;
    const rows = [...(l.readings.get(f.id) ?? [])].sort((a, b) => a.createdAt.getTime() - b.createdAt.getTime());
    const first = rows.find((r) => r.kind === 'first');
    const second = rows.find((r) => r.kind === 'second');
    if (first && second) paired.push({ first: { readerId: first.reader.id, pai: first.pai }, second: { readerId: second.reader.id, pai: second.pai } });
    if (state.status === 'agreed' && !l.reference.has(f.id)) candidates.push({ filmId: f.id, agreedPai: state.agreedPai!, thumbnailUrl: `/api/films/${f.id}/thumbnail` });
  }
  const clinicians = await em.find(MembershipSchema, { practice: actor.practiceId, role: 'clinician', revokedAt: null }, { fields: ['user'] });
  const readerIds = [...new Set([...clinicians.map((m) => m.user.id), ...paired.flatMap((p) => [p.first.readerId, p.second.readerId])])];
  const users = readerIds.length ? await em.find(UserSchema, { id: { $in: readerIds } }, { fields: ['id', 'name', 'email'] }) : [];
  const nameOf = new Map(users.map((u) => [u.id, u.name ?? u.email]));
  const name = (id: string) => nameOf.get(id) ?? 'Former member';
  const reference = new Map(referenceRows.map((r) => [r.film.id, r.pai]));
  const exercises = (readerId: string) =>
    exerciseRows.filter((r) => r.reader.id === readerId).map((r) => ({ filmId: r.film.id, pai: r.pai, at: r.createdAt.toISOString() }));
  const result: AgreementView = {
    pairs: readerPairAgreement(paired).map((p) => ({ ...p, names: [name(p.readers[0]), name(p.readers[1])] as [string, string] })),
    calibration: [...new Set(clinicians.map((m) => m.user.id))]
      .map((id) => ({ ...calibration(id, reference, exercises(id), today), name: name(id) }))
      .sort((a, b) => a.name.localeCompare(b.name)),
    reference: referenceRows.map((r) => ({ filmId: r.film.id, pai: r.pai, thumbnailUrl: `/api/films/${r.film.id}/thumbnail` })),
    candidates: candidates.reverse().slice(0, 24),
    counts,
    secondReadingPercent: l.percent,
    scale: PAI_SCALE,
    method:
      'Cohen’s weighted kappa on the full PAI scale 1–5 (linear and quadratic weights), 95% interval from the large-sample variance of Fleiss, Cohen & Everitt (1969); first against blinded second readings of the same film.',
    caution: SCORING_CAUTION,
    today,
  };
  await audit(em, actor, { action: 'reading.agreement_read', detail: { pairs: result.pairs.length, reference: result.reference.length } });
  return result;
}
