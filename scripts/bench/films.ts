/**
 * Benchmark: upload-to-thumbnail time of a film — a 10 MB DICOM (16-bit, Explicit VR Little
 * Endian) and a 5 MB JPEG, both drawn here (tests/support/film-fixtures.ts, invented) — through
 * the upload service (lib/services/films.ts uploadFilm: content check, DICOM read and windowing or
 * JPEG re-encode without metadata, web rendition and thumbnail with sharp, three objects to the S3
 * fake, the row in PostgreSQL, the audit event) until the thumbnail can be read back from storage.
 * The browser's transfer time is not in it. Also a 10 MB DICOM in JPEG Lossless (.70).
 *
 * Run by scripts/bench.sh (throwaway PostgreSQL and S3 fake; DATABASE_URL and S3_URL exported):
 *   npm run bench -- films
 * BENCH_FILM_RUNS (default 5) uploads of each; the median, min and max are printed.
 */
import { runUnderScriptsTsconfig } from '../lib/scripts-tsconfig';
import { performance } from 'node:perf_hooks';

await runUnderScriptsTsconfig(import.meta.url);

const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../../mikro-orm.config');
const entities = await import('../../entities');
const { uploadFilm } = await import('../../lib/services/films');
const { processFilm } = await import('../../lib/films/process');
const { getObject } = await import('../../lib/storage/s3');
const { drawRadiograph, filmDicom, filmJpeg, TS } = await import('../../tests/support/film-fixtures');
type Actor = import('../../lib/auth/actor').Actor;

if (!process.env.DATABASE_URL || !process.env.S3_URL) {
  console.error('bench/films: run through scripts/bench.sh (needs DATABASE_URL and S3_URL)');
  process.exit(2);
}
const RUNS = Number(process.env.BENCH_FILM_RUNS ?? 5);

// --- the films (drawn once) --------------------------------------------------------------------------------
const t0 = performance.now();
const side = 2300; // 2300² × 2 bytes = 10.1 MiB of 16-bit pixels
const dicomFilm = drawRadiograph(side, side, 21);
const dicom = filmDicom(dicomFilm, { transferSyntax: TS.explicitLE, pixelSpacing: [0.019, 0.019], patientName: 'Mere^Rowan', patientId: 'B-000001', acquisitionDate: '20250310', windowCenter: 2048, windowWidth: 4096 });
const lossless = filmDicom(dicomFilm, { transferSyntax: TS.jpegLossless70, pixelSpacing: [0.019, 0.019], patientName: 'Mere^Rowan', patientId: 'B-000001' });
// A 5 MB JPEG: try a size, then scale the pixel count to the bytes wanted (JPEG bytes grow with pixels).
const TARGET = 5.2 * 1024 * 1024;
let w = 3000;
let jpeg = await filmJpeg(drawRadiograph(w, w * 0.75, 22), 100);
if (jpeg.length < 5 * 1024 * 1024) {
  w = Math.ceil((w * Math.sqrt(TARGET / jpeg.length)) / 4) * 4;
  jpeg = await filmJpeg(drawRadiograph(w, w * 0.75, 22), 100);
}
console.log(`films drawn in ${((performance.now() - t0) / 1000).toFixed(1)} s: DICOM ${(dicom.length / 1048576).toFixed(1)} MB (${side}×${side}, 16-bit), JPEG Lossless DICOM ${(lossless.length / 1048576).toFixed(1)} MB, JPEG ${(jpeg.length / 1048576).toFixed(1)} MB`);

// --- a practice, a patient and one case per run -----------------------------------------------------------
const orm = await MikroORM.init({ ...config, pool: { min: 0, max: 4 } });
const slug = `bench-films-${Date.now()}`;
const em0 = orm.em.fork();
const practice = em0.create(entities.PracticeSchema, { name: 'Bench Endodontics (invented)', slug });
const user = em0.create(entities.UserSchema, { email: `clinician.${slug}@bench.invalid`, name: 'Bench Clinician' });
em0.create(entities.MembershipSchema, { user, practice, role: 'clinician' });
const patient = em0.create(entities.PatientSchema, {
  practice,
  registryNumber: 'B-000001',
  givenName: 'Rowan',
  familyName: 'Mere',
  dateOfBirth: '1968-05-17',
  sex: 'male',
  recallContact: false,
  recallChannel: 'none',
  researchUse: false,
  consentDate: '2025-01-06',
});
await em0.flush();
const actor: Actor = { userId: user.id, email: user.email, name: user.name ?? null, practiceId: practice.id, practiceName: practice.name, roles: ['clinician'], ip: null, userAgent: 'bench' };
const knex = em0.getKnex();
async function newCase(): Promise<string> {
  const id = crypto.randomUUID();
  const now = new Date();
  await knex('treatment_case').insert({
    id, practice_id: practice.id, patient_id: patient.id, tooth: 46, tooth_group: 'molar', tooth_arch: 'lower', kind: 'primary_treatment',
    operator_id: user.id, start_date: '2025-01-06', completion_date: '2025-01-20', pulpal_diagnosis: 'pulp_necrosis',
    apical_diagnosis: 'asymptomatic_apical_periodontitis', pai_score: 3, lesion_diameter_mm: 2, source: 'demo', created_at: now, updated_at: now,
  });
  return id;
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;
const fmt = (ms: number) => `${(ms / 1000).toFixed(2)} s`;

async function bench(name: string, bytes: Buffer) {
  const total: number[] = [];
  const processing: number[] = [];
  let rss = 0;
  for (let i = 0; i < RUNS; i++) {
    const copy = new Uint8Array(bytes);
    const caseId = await newCase(); // a new case per run: no upload is a repeat of another
    const p0 = performance.now();
    await processFilm(copy, 64 * 1024 * 1024);
    processing.push(performance.now() - p0);
    const s = performance.now();
    const r = await uploadFilm(orm.em.fork(), actor, caseId, { role: 'follow_up' }, copy);
    const stored = await orm.em.fork().findOneOrFail(entities.FilmSchema, r.film.id);
    const thumb = await getObject(stored.thumbnailKey);
    if (!thumb || thumb.length === 0) throw new Error('no thumbnail');
    total.push(performance.now() - s);
    rss = Math.max(rss, process.memoryUsage().rss);
  }
  console.log(
    `${name.padEnd(34)} upload→thumbnail median ${fmt(median(total))} (min ${fmt(Math.min(...total))}, max ${fmt(Math.max(...total))}); ` +
      `of which reading and rendering ~${fmt(median(processing))}; peak RSS ${(rss / 1048576).toFixed(0)} MB; ${RUNS} runs`,
  );
}

await bench(`DICOM ${(dicom.length / 1048576).toFixed(1)} MB, Explicit VR LE`, dicom);
await bench(`JPEG ${(jpeg.length / 1048576).toFixed(1)} MB`, jpeg);
await bench(`DICOM ${(lossless.length / 1048576).toFixed(1)} MB, JPEG Lossless`, lossless);
await orm.close(true);
