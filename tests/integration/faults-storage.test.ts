import { execFile } from 'node:child_process';
import { randomBytes, randomUUID } from 'node:crypto';
import { once } from 'node:events';
import path from 'node:path';
import { promisify } from 'node:util';
import { Queue } from 'bullmq';
import { afterAll, afterEach, describe, expect, it, vi } from 'vitest';
import { AuditEventSchema, FilmSchema, RecallVisitSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { QUEUES, STORAGE_SWEEP_SCHEDULER_ID, connectionForWorker } from '@/lib/queue';
import { deriveUploadLinkSecret, uploadToken } from '@/lib/referrers/upload-token';
import { createCase } from '@/lib/services/cases';
import { EXPORT_UNAVAILABLE_MESSAGE, runCohortExport } from '@/lib/services/cohort-export';
import { writeCohortArchive } from '@/lib/cohorts/archive';
import type { WriteCohortArchive } from '@/lib/cohorts/types';
import { createCohort, readCohortExport, saveCohortVersion, startCohortExport } from '@/lib/services/cohorts';
import { FILM_STORE_UNAVAILABLE, uploadFilm, type FilmView } from '@/lib/services/films';
import { createPatient } from '@/lib/services/patients';
import { createReferrer } from '@/lib/services/referrers';
import { sendUploadLink } from '@/lib/services/referrer-links';
import { recordReading } from '@/lib/services/readings';
import { createReview } from '@/lib/services/reviews';
import { MISSING_ARCHIVE_MESSAGE, sweepStorage } from '@/lib/services/storage-sweep';
import { RETRY_AFTER_SECONDS } from '@/lib/services/unavailable';
import { deleteObjects, headObject, listObjects, putObject } from '@/lib/storage/s3';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { drawRadiograph, filmPng } from '../support/film-fixtures';
import { spawnWorker, waitFor, type WorkerChild } from './recall-fixtures';

/**
 * Issue 15, faults: the object store (the S3 fake, scripts/s3-fake.ts) stopped during an upload and
 * during an export, with the same shell helpers npm test uses (scripts/lib/services.sh s3_stop /
 * s3_start), and the storage sweep that removes what an outage leaves behind.
 * - A film upload (the route, as the browser sends it) and a referrer's upload (/api/upload/<token>)
 *   get a clear 503 `unavailable` with Retry-After, keep no row and no object, leave the link
 *   unused, and the same upload succeeds once the store is back, without a duplicate.
 * - A research export run by the real worker fails its attempt while the store is down, the row
 *   says so in plain words (never a driver's message), BullMQ retries it, and it ends done with
 *   exactly one object.
 * - The sweep removes objects with no row and rows whose objects never arrived, older than the
 *   grace period, and leaves an upload in flight alone.
 * Only the session is replaced (getRequestContext), as in films.test.ts; referrer mail is not queued.
 */
const state = vi.hoisted(() => ({ actor: undefined as unknown }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: async () => ({ em: services.em(), actor: state.actor }),
}));
vi.mock('@/lib/services/referrer-outbox', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  queueReferrerMessage: async () => true,
}));

const { POST: uploadRoute } = await import('@/app/api/cases/[id]/films/route');
const { GET: publicGet, POST: publicPost } = await import('@/app/api/upload/[token]/route');

const services = await openServices();
const knex = () => services.em().getKnex();
const origin = new URL(env.APP_URL).origin;
const repo = path.resolve(import.meta.dirname, '../..');
const run = promisify(execFile);
const children: WorkerChild[] = [];

const s3 = (fn: 's3_stop' | 's3_start') => run('bash', ['-c', `source scripts/lib/services.sh && ${fn}`], { cwd: repo, env: process.env, timeout: 60_000 });

afterEach(async () => {
  for (const w of children.splice(0)) if (w.proc.exitCode === null && w.proc.signalCode === null) w.proc.kill('SIGKILL');
  await s3('s3_start'); // never leave the suite without its store
});
afterAll(() => services.close());

async function keysUnder(prefix: string): Promise<string[]> {
  const keys: string[] = [];
  for await (const page of listObjects(prefix)) keys.push(...page.map((o) => o.key));
  return keys.sort();
}

async function world(slug: string) {
  await resetData(services.orm, services.redis);
  const a = await makeRegistryPractice(services.em(), `${slug}${randomBytes(2).toString('hex')}`);
  const referrer = await createReferrer(services.em(), a.coordinator, { name: 'Dr Tamsin Vale', email: 'dr.vale@referrers.test.invalid' });
  const patient = await createPatient(services.em(), a.coordinator, patientInput({ registryNumber: 'S3-1' }));
  const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { referrerId: referrer.id }));
  const visits = await services.em().find(RecallVisitSchema, { case: c.id }, { orderBy: { milestone: 'asc' } });
  return { a, c, visit: visits[0]!, casePrefix: `practices/${a.practice.id}/cases/${c.id}/` };
}

interface Answer {
  status: number;
  retryAfter: string | null;
  body: { error?: string; message?: string; film?: FilmView; created?: boolean; received?: number };
}

async function answer(res: Response): Promise<Answer> {
  return { status: res.status, retryAfter: res.headers.get('retry-after'), body: (await res.json()) as Answer['body'] };
}

async function uploadAs(actor: Actor, caseId: string, bytes: Uint8Array): Promise<Answer> {
  state.actor = actor;
  const form = new FormData();
  form.set('file', new Blob([new Uint8Array(bytes)], { type: 'image/png' }), 'film.png');
  form.set('role', 'follow_up');
  const req = new Request(`${origin}/api/cases/${caseId}/films`, { method: 'POST', headers: { Origin: origin, 'Sec-Fetch-Site': 'same-origin' }, body: form });
  return answer(await uploadRoute(req, { params: Promise.resolve({ id: caseId }) }));
}

async function referrerUpload(token: string, bytes: Uint8Array): Promise<Answer> {
  const form = new FormData();
  form.append('file', new Blob([new Uint8Array(bytes)], { type: 'image/png' }), 'film.png');
  const req = new Request(`${origin}/api/upload/${token}`, { method: 'POST', headers: { origin, 'x-forwarded-for': '198.51.100.21' }, body: form });
  return answer(await publicPost(req, { params: Promise.resolve({ token }) }));
}

describe('the object store down during an upload (issue 15, faults)', () => {
  it('a film upload gets a 503 with a retry hint and keeps nothing; the same upload succeeds once the store is back, once', async () => {
    const w = await world('s3film');
    const png = await filmPng(drawRadiograph(320, 240, 31));
    await s3('s3_stop');
    const down = await uploadAs(w.a.clinician, w.c.id, png);
    expect(down).toMatchObject({ status: 503, retryAfter: String(RETRY_AFTER_SECONDS), body: { error: 'unavailable', message: FILM_STORE_UNAVAILABLE } });
    expect(await services.em().fork().count(FilmSchema, { case: w.c.id })).toBe(0);
    expect(await services.em().fork().count(AuditEventSchema, { action: 'film.uploaded' })).toBe(0);

    await s3('s3_start');
    expect(await keysUnder(w.casePrefix)).toEqual([]); // nothing reached the store
    const retry = await uploadAs(w.a.clinician, w.c.id, png);
    expect(retry).toMatchObject({ status: 201, body: { created: true } });
    const again = await uploadAs(w.a.clinician, w.c.id, png);
    expect(again).toMatchObject({ status: 200, body: { created: false, film: { id: retry.body.film!.id } } });
    expect(await services.em().fork().count(FilmSchema, { case: w.c.id })).toBe(1);
    expect(await keysUnder(w.casePrefix)).toHaveLength(3);
  }, 120_000);

  it('a referrer’s upload gets a 503 and leaves the single-use link usable; the retry is taken, then the link is spent', async () => {
    const w = await world('s3ref');
    const link = await sendUploadLink(services.em(), w.a.coordinator, w.c.id, { visitId: w.visit.id });
    const token = uploadToken(link.linkId, deriveUploadLinkSecret(env.NEXTAUTH_SECRET));
    const png = await filmPng(drawRadiograph(300, 220, 32));

    await s3('s3_stop');
    const down = await referrerUpload(token, png);
    expect(down).toMatchObject({ status: 503, retryAfter: String(RETRY_AFTER_SECONDS), body: { error: 'unavailable' } });
    expect(down.body.message).toMatch(/link still works/);
    expect((await knex()('referrer_upload_link').where({ id: link.linkId }).first('used_at', 'film_count')).used_at).toBeNull();
    expect(await services.em().fork().count(FilmSchema, { case: w.c.id })).toBe(0);
    const open = await publicGet(new Request(`${origin}/api/upload/${token}`, { headers: { 'x-forwarded-for': '198.51.100.21' } }), { params: Promise.resolve({ token }) });
    expect(open.status).toBe(200);

    await s3('s3_start');
    expect(await referrerUpload(token, png)).toMatchObject({ status: 201, body: { received: 1 } });
    expect(await services.em().fork().count(FilmSchema, { case: w.c.id, source: 'referrer' })).toBe(1);
    expect((await referrerUpload(token, png)).status).toBe(410);
    expect(await services.em().fork().count(FilmSchema, { case: w.c.id })).toBe(1);
    expect(await keysUnder(w.casePrefix)).toHaveLength(3);
  }, 120_000);
});

describe('the object store down during a research export (issue 15, faults)', () => {
  it('the attempt fails, the row says so in plain words, BullMQ retries it and the export ends done with exactly one object', async () => {
    const w = await world('s3export');
    for (const [i, given] of ['Ilka', 'Odran', 'Peregrine'].entries()) {
      const patient = await createPatient(services.em(), w.a.coordinator, patientInput({ registryNumber: `X-${i}`, givenName: given, researchUse: true }));
      const c = await createCase(services.em(), w.a.clinician, caseInput(patient.id, w.a.clinician.userId, { startDate: `2022-0${1 + i}-01`, completionDate: `2022-0${1 + i}-10` }));
      await createReview(services.em(), w.a.clinician, c.id, { reviewDate: `2023-0${1 + i}-12`, toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });
    }
    const cohort = await createCohort(services.em(), w.a.researcher, { name: 'Store outage' });
    await saveCohortVersion(services.em(), w.a.researcher, cohort.id, { filters: {}, variables: [], k: 2 });

    // the web process's producer and the worker share a queue prefix of their own
    const prefix = `lamina-test-s3-${randomBytes(3).toString('hex')}`;
    process.env.QUEUE_PREFIX = prefix;
    const worker = spawnWorker({ QUEUE_PREFIX: prefix, RECALL_SCAN_ON_START: '0', WORKER_LOCK_MS: '5000', SMTP_TIMEOUT_MS: '2000' });
    children.push(worker);
    const fail = (what: string) => (e: unknown) => {
      throw new Error(`${what}: ${(e as Error).message}; worker output:\n${worker.output().slice(-3000)}`);
    };
    await waitFor('the worker to start', async () => worker.output().includes('[worker] started'), 60_000, 100).catch(fail('start'));

    await s3('s3_stop');
    const started = await startCohortExport(services.em(), w.a.researcher, cohort.id, { version: 1 });
    const row = () => knex()('cohort_export').where({ id: started.id }).first('status', 'attempts', 'error', 'object_key') as Promise<{ status: string; attempts: number; error: string | null; object_key: string }>;
    await waitFor('the first attempt to fail', async () => {
      const r = await row();
      return r.attempts >= 1 && r.status === 'queued' && r.error !== null;
    }, 90_000, 100).catch(fail('first attempt'));
    // meanwhile the API (and the page, which polls it) shows a queued export with a plain reason
    const meanwhile = await readCohortExport(services.em().fork(), w.a.researcher, started.id);
    expect(meanwhile).toMatchObject({ status: 'queued', error: EXPORT_UNAVAILABLE_MESSAGE, downloadUrl: null });
    expect(worker.output()).not.toMatch(/unhandled rejection/);

    await s3('s3_start');
    await waitFor('the retried export to finish', async () => (await row()).status === 'done', 90_000, 200).catch(fail('retry'));
    const done = await row();
    expect(done).toMatchObject({ status: 'done', attempts: 2, error: null });
    expect(await keysUnder(`practices/${w.a.practice.id}/cohorts/${cohort.id}/exports/`)).toEqual([done.object_key]);
    expect((await headObject(done.object_key))?.size).toBeGreaterThan(100);
    expect(await services.em().fork().count(AuditEventSchema, { action: 'cohort.exported', entityId: started.id })).toBe(1);
    expect(await services.em().fork().count(AuditEventSchema, { action: 'cohort.export_failed', entityId: started.id })).toBe(0);

    // the same worker keeps the storage sweep's hourly schedule
    const connection = connectionForWorker(env.REDIS_URL, { name: 'test-sweep-scheduler' });
    const q = new Queue(QUEUES.storageSweep, { connection, prefix });
    try {
      const schedulers = await q.getJobSchedulers();
      expect(schedulers.map((s) => [s.key, s.pattern])).toEqual([[STORAGE_SWEEP_SCHEDULER_ID, '30 * * * *']]);
    } finally {
      await q.close();
      connection.disconnect();
    }
  }, 240_000);
});

describe('the object store going down in the middle of an export’s multipart upload (issue 15, faults)', () => {
  it('the attempt fails with the store named as the reason (not “the operation was aborted”), leaves no object, and the retry writes exactly one', async () => {
    const w = await world('s3multi');
    const patient = await createPatient(services.em(), w.a.coordinator, patientInput({ registryNumber: 'M-1', researchUse: true }));
    const c = await createCase(services.em(), w.a.clinician, caseInput(patient.id, w.a.clinician.userId, { startDate: '2022-01-01', completionDate: '2022-01-10' }));
    await createReview(services.em(), w.a.clinician, c.id, { reviewDate: '2023-01-12', toothStatus: 'present', paiScore: 1, lesionDiameterMm: 0 });
    const cohort = await createCohort(services.em(), w.a.researcher, { name: 'Multipart' });
    await saveCohortVersion(services.em(), w.a.researcher, cohort.id, { filters: {}, variables: [], k: 2 });
    const started = await startCohortExport(services.em(), w.a.researcher, cohort.id, { version: 1 });

    // A writer with an archive large enough for a multipart upload (parts of 5 MB): 6 MB, then it
    // waits while the store is stopped, then 12 MB more — honouring backpressure and the signal as
    // lib/cohorts/archive.ts does. The refused part must reach the row as an outage in plain words
    // (without the abort on the upload's failure it read "The operation was aborted"); the race
    // below also fails the test if the attempt never ends.
    let halfway!: () => void;
    const reachedHalfway = new Promise<void>((r) => (halfway = r));
    let openGate!: () => void;
    const gate = new Promise<void>((r) => (openGate = r));
    const bigWriter: WriteCohortArchive = async (input, out) => {
      const stop = new Promise<never>((_, reject) => input.signal?.addEventListener('abort', () => reject(input.signal!.reason), { once: true }));
      stop.catch(() => undefined);
      const put = async (n: number) => {
        for (let i = 0; i < n; i++) if (!out.write(randomBytes(256 * 1024))) await Promise.race([once(out, 'drain'), stop]);
      };
      await put(24);
      halfway();
      await Promise.race([gate, stop]);
      await put(48);
      out.end();
      return { cases: 1, patients: 1, reviews: 1, generalised: 0, suppressed: 0, k: 2, minL: 1, files: ['cases.csv'] };
    };
    const attempt = runCohortExport({ em: () => services.em().fork(), write: bigWriter, progressEveryMs: 0 }, started.id).then(
      () => 'finished',
      (e: unknown) => e,
    );
    await reachedHalfway;
    await s3('s3_stop');
    openGate();
    const outcome = await Promise.race([attempt, waitFor('never', async () => false, 90_000, 1_000).catch(() => 'hung')]);
    expect(outcome).toBeInstanceOf(Error);
    const r = (await knex()('cohort_export').where({ id: started.id }).first('status', 'error', 'object_key')) as { status: string; error: string; object_key: string };
    expect(r).toMatchObject({ status: 'queued', error: EXPORT_UNAVAILABLE_MESSAGE });

    await s3('s3_start');
    expect(await headObject(r.object_key)).toBeNull();
    expect(await runCohortExport({ em: () => services.em().fork(), write: writeCohortArchive, progressEveryMs: 0 }, started.id)).toBe('done');
    expect(await keysUnder(`practices/${w.a.practice.id}/cohorts/${cohort.id}/exports/`)).toEqual([r.object_key]);
  }, 240_000);
});

describe('the storage sweep (issue 15, faults)', () => {
  it('removes objects with no row and rows whose objects never arrived, older than the grace period; an upload in flight stays', async () => {
    const w = await world('s3sweep');
    const em = services.em();
    const png = (seed: number) => filmPng(drawRadiograph(200, 160, seed));
    const orphanKeys = (filmId: string) => ['original.png', 'web.png', 'thumbnail.jpg'].map((n) => `${w.casePrefix}films/${filmId}/${n}`);
    const putAll = (keys: string[]) => Promise.all(keys.map((key) => putObject({ key, body: new Uint8Array([1, 2, 3]), contentType: 'application/octet-stream' })));

    // old, both ways: objects of an upload whose row was never written, a film row whose objects are gone,
    // a read film whose objects are gone (kept: someone saw it), an export file whose row failed
    // (e.g. the store was down when the failure removed it), a done export whose archive is missing
    const keep = (await uploadFilm(em, w.a.clinician, w.c.id, { role: 'post_fill' }, await png(41))).film;
    const lost = (await uploadFilm(em, w.a.clinician, w.c.id, { role: 'pre_operative' }, await png(42))).film;
    const read = (await uploadFilm(em, w.a.clinician, w.c.id, { role: 'follow_up' }, await png(43))).film;
    await recordReading(em, w.a.clinician, read.id, { kind: 'first', pai: 2 });
    const lostRow = await knex()('film').where({ id: lost.id }).first('original_key', 'web_key', 'thumbnail_key');
    await deleteObjects([lostRow.original_key]); // the web and thumbnail objects stay: removed with the row
    const readRow = await knex()('film').where({ id: read.id }).first('original_key', 'web_key', 'thumbnail_key');
    await deleteObjects([readRow.original_key, readRow.web_key, readRow.thumbnail_key]);
    const oldOrphans = orphanKeys(randomUUID());
    await putAll(oldOrphans);
    const cohort = await createCohort(em, w.a.researcher, { name: 'Sweep' });
    await saveCohortVersion(em, w.a.researcher, cohort.id, { filters: {}, variables: [], k: 2 });
    await startCohortExport(em, w.a.researcher, cohort.id, { version: 1 });
    await startCohortExport(em, w.a.researcher, cohort.id, { version: 1 });
    const exportRows = (await knex()('cohort_export').where({ practice_id: w.a.practice.id }).orderBy('created_at').select('id', 'object_key')) as { id: string; object_key: string }[];
    expect(exportRows).toHaveLength(2);
    const [failedExport, missingExport] = exportRows as [{ id: string; object_key: string }, { id: string; object_key: string }];
    await knex()('cohort_export').where({ id: failedExport.id }).update({ status: 'failed', finished_at: new Date() });
    await putAll([failedExport.object_key]);
    await knex()('cohort_export').where({ id: missingExport.id }).update({ status: 'done', finished_at: new Date() });

    // the store's clock has whole seconds: what comes after the next full second is "in flight"
    const cutoff = new Date(Math.floor(Date.now() / 1000) * 1000 + 1000);
    await waitFor('the clock to pass the cutoff', async () => Date.now() > cutoff.getTime() + 50, 5_000, 50);
    const freshOrphans = orphanKeys(randomUUID()); // an upload in flight: objects written, row not yet
    await putAll(freshOrphans);
    const freshLost = (await uploadFilm(em, w.a.clinician, w.c.id, { role: 'follow_up' }, await png(44))).film;
    const freshRow = await knex()('film').where({ id: freshLost.id }).first('original_key');
    await deleteObjects([freshRow.original_key]);

    const now = new Date();
    const summary = await sweepStorage(em, { now, graceMs: now.getTime() - cutoff.getTime() });
    // (other practices' leftovers of this file's earlier tests may be swept too: counted per practice below)
    expect(summary.filmRowsRemoved).toBe(1);
    expect(summary.exportsMarkedFailed).toBe(1);
    expect(summary.readFilmsMissingObjects).toBe(1);

    const left = await keysUnder(w.casePrefix);
    for (const k of [...oldOrphans, lostRow.web_key, lostRow.thumbnail_key]) expect(left).not.toContain(k);
    for (const k of freshOrphans) expect(left).toContain(k);
    expect(left).toContain((await knex()('film').where({ id: keep.id }).first('original_key')).original_key);
    expect(await headObject(failedExport.object_key)).toBeNull();
    const films = (await knex()('film').where({ case_id: w.c.id }).select('id')) as { id: string }[];
    expect(films.map((f) => f.id).sort()).toEqual([keep.id, read.id, freshLost.id].sort());
    expect(await knex()('cohort_export').where({ id: missingExport.id }).first('status', 'error')).toEqual({ status: 'failed', error: MISSING_ARCHIVE_MESSAGE });
    expect((await knex()('cohort_export').where({ id: failedExport.id }).first('status')).status).toBe('failed');

    // audited with counts only: no key, film, case or patient id in the event
    const events = await em.fork().find(AuditEventSchema, { action: 'storage.swept', practiceId: w.a.practice.id });
    expect(events).toHaveLength(1);
    expect(events[0]!.detail).toMatchObject({ objectsRemoved: 6, filmRowsRemoved: 1, exportsMarkedFailed: 1 });
    const text = JSON.stringify(events[0]);
    for (const id of [w.c.id, lost.id, keep.id, read.id, missingExport.id]) expect(text).not.toContain(id);

    // a second run changes nothing
    const again = await sweepStorage(em, { now, graceMs: now.getTime() - cutoff.getTime() });
    expect(again).toMatchObject({ filmRowsRemoved: 0, exportsMarkedFailed: 0 });
    expect(await keysUnder(w.casePrefix)).toEqual(left);

    // the same sweep by hand (npm run storage-sweep): with the default hour of grace everything here is in flight
    const script = await run(process.execPath, ['--import', 'tsx', 'scripts/storage-sweep.ts', '--dry-run'], {
      cwd: repo,
      env: { ...process.env, TSX_TSCONFIG_PATH: 'scripts/tsconfig.json' },
      timeout: 90_000,
    });
    expect(script.stdout).toMatch(/\[storage-sweep\] would remove 0 object\(s\), 0 film row\(s\), 0 export\(s\) marked failed/);
    for (const secret of [w.c.id, w.a.practice.id, freshLost.id, 'practices/']) expect(script.stdout).not.toContain(secret);
    expect(await keysUnder(w.casePrefix)).toEqual(left);
  }, 180_000);
});
