/**
 * Demo films: for the demo practice's most recent reviewed follow-ups, a post-fill baseline and the
 * follow-up radiograph, drawn by lib/demo/drawn-films.ts (invented: a tooth, a root filling and a
 * dark periapical area whose size follows the review's PAI) and written as DICOM with the case's
 * patient, the film's date and a pixel spacing, then uploaded through the film service like any
 * upload (type check, renditions, object store, audit). Some follow-ups get readings, so the reading
 * queue, the blinded second reading, adjudication and Reader agreement have something to show;
 * the rest wait in the queue. Idempotent: a practice that has any film is left alone.
 */
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Actor } from '@/lib/auth/actor';
import { FilmSchema } from '@/entities';
import { uploadFilm } from '@/lib/services/films';
import { inSecondReadingShare } from '@/lib/reading/rules';
import { recordReading } from '@/lib/services/readings';
import { knexOf } from '@/lib/services/registry-common';
import { drawRadiograph, filmDicom } from './drawn-films';

/** How many reviewed follow-ups get films at least, and how many of those are read in the seed. */
export const DEMO_FILM_CASES = 14;
const READ = 9;
/** Follow-ups in the second-reading share the demo needs: agreed, adjudication, one awaiting a second reading. */
export const MIN_IN_SHARE = 3;
/** Reviewed follow-ups looked at beyond DEMO_FILM_CASES to find MIN_IN_SHARE (20% share: 0.8^44 < 1e-4 to fall short). */
const MAX_EXTRA = 30;

interface Row {
  case_id: string;
  visit_id: string;
  operator_id: string;
  completion_date: string;
  review_date: string;
  pai_score: number;
  baseline_pai: number;
  given_name: string;
  family_name: string;
  registry_number: string;
}

const dicomDate = (d: string) => d.replaceAll('-', '');
/** The drawn dark area's size for a PAI: none at 1–2, growing with the score. */
const lesionScaleOf = (pai: number) => (pai <= 2 ? 0 : (pai - 2) * 0.5);

export async function seedDemoFilms(em: EntityManager, practice: { id: string; name: string }): Promise<{ films: number; readings: number }> {
  if ((await em.count(FilmSchema, { practice: practice.id })) > 0) return { films: 0, readings: 0 };
  const knex = knexOf(em);
  const rows = (await knex
    .select(
      'r.case_id',
      'r.visit_id',
      'c.operator_id',
      knex.raw('c.completion_date::text as completion_date'),
      knex.raw('r.review_date::text as review_date'),
      'r.pai_score',
      'c.pai_score as baseline_pai',
      'p.given_name',
      'p.family_name',
      'p.registry_number',
    )
    .from('review as r')
    .join('treatment_case as c', 'c.id', 'r.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .where('r.practice_id', practice.id)
    .whereNull('r.superseded_by_id')
    .whereNotNull('r.visit_id')
    .whereNotNull('r.pai_score')
    .where('r.tooth_status', 'present')
    .whereNull('c.archived_at')
    .orderBy([{ column: 'r.review_date', order: 'desc' }, { column: 'r.id' }])
    .limit(DEMO_FILM_CASES + MAX_EXTRA)) as Row[];
  const clinicians = (await knex('membership as m')
    .join('app_user as u', 'u.id', 'm.user_id')
    .where({ 'm.practice_id': practice.id, 'm.role': 'clinician' })
    .whereNull('m.revoked_at')
    .orderBy('u.email')
    .select('u.id', 'u.email', 'u.name')) as { id: string; email: string; name: string | null }[];
  const actorOf = (userId: string): Actor => {
    const u = clinicians.find((c) => c.id === userId) ?? clinicians[0]!;
    return { userId: u.id, email: u.email, name: u.name, practiceId: practice.id, practiceName: practice.name, roles: ['clinician'], ip: null, userAgent: null };
  };

  const practiceRow = (await knex('practice').where({ id: practice.id }).first('second_reading_percent')) as { second_reading_percent: number };
  const percent = Number(practiceRow.second_reading_percent);
  // Films go to a second reader by a hash of their id (lib/reading/rules.ts), so which ones do is
  // known only after the upload: go on past DEMO_FILM_CASES until MIN_IN_SHARE follow-ups are in the share.
  const uploaded: { row: Row; filmId: string; inShare: boolean }[] = [];
  for (const [i, r] of rows.entries()) {
    if (i >= DEMO_FILM_CASES && uploaded.filter((u) => u.inShare).length >= MIN_IN_SHARE) break;
    const operator = actorOf(r.operator_id);
    const dicom = (date: string, pai: number, seed: number) =>
      filmDicom(drawRadiograph(640, 480, seed, lesionScaleOf(pai)), {
        patientName: `${r.family_name}^${r.given_name}`,
        patientId: r.registry_number,
        imagerPixelSpacing: [0.025, 0.025],
        acquisitionDate: dicomDate(date),
        modality: 'IO',
      });
    await uploadFilm(em.fork(), operator, r.case_id, { role: 'post_fill' }, dicom(r.completion_date, r.baseline_pai, 100 + i));
    const followUp = await uploadFilm(em.fork(), operator, r.case_id, { role: 'follow_up', visitId: r.visit_id }, dicom(r.review_date, r.pai_score, 100 + i));
    uploaded.push({ row: r, filmId: followUp.film.id, inShare: percent > 0 && inSecondReadingShare(followUp.film.id, percent) });
  }
  const films = 2 * uploaded.length;

  // Read every film of the share (so second readings have something) and others up to READ; the rest
  // wait for a first reading. The last film of the share waits for its second reading.
  const inShare = uploaded.filter((u) => u.inShare);
  const toRead = [...inShare, ...uploaded.filter((u) => !u.inShare).slice(0, Math.max(0, READ - inShare.length))];
  let readings = 0;
  for (const [j, u] of toRead.entries()) {
    const operator = actorOf(u.row.operator_id);
    // The treating clinician reads the film as the review scored it (nothing on the review changes).
    const first = await recordReading(em.fork(), operator, u.filmId, { kind: 'first', pai: u.row.pai_score });
    readings += 1;
    if (first.status !== 'awaiting-second' || j === inShare.length - 1) continue;
    // A blinded second reading by another clinician: the same or one step off, once two steps (to adjudication).
    const other = clinicians.find((c) => c.id !== operator.userId);
    if (!other) continue;
    const step = j === 1 ? 2 : j % 2;
    const pai = u.row.pai_score + step <= 5 ? u.row.pai_score + step : u.row.pai_score - step;
    await recordReading(em.fork(), actorOf(other.id), u.filmId, { kind: 'second', pai });
    readings += 1;
  }
  return { films, readings };
}
