import { ListObjectsV2Command } from '@aws-sdk/client-s3';
import type { Writable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AuditEventSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import type { WriteCohortArchive } from '@/lib/cohorts/types';
import { writeCohortArchive } from '@/lib/cohorts/archive';
import { env } from '@/lib/env';
import { deriveDownloadKey, signDownloadToken } from '@/lib/security/download-token';
import { createCase } from '@/lib/services/cases';
import { cohortRows, runCohortExport, type ExportContext } from '@/lib/services/cohort-export';
import { cancelCohortExport, countCohort, createCohort, openCohortDownload, readCohort, readCohortExport, saveCohortVersion, startCohortExport } from '@/lib/services/cohorts';
import { createPatient } from '@/lib/services/patients';
import { createReview } from '@/lib/services/reviews';
import { ServiceError } from '@/lib/services/errors';
import { headObject, s3 } from '@/lib/storage/s3';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

/**
 * Research cohorts (issue 14) against the real PostgreSQL, Redis and the S3 fake: the consent filter
 * (counts and the export's reader), immutable versions, the export job's run with the real archive
 * writer (lib/cohorts), cancellation (queued and running; the partial object removed), a retry that
 * replaces and never duplicates the object, and the download link's expiry and practice check.
 */
const services = await openServices();
afterAll(() => services.close());

let res: Actor;
let otherRes: Actor;
let cohortId: string;
const names = ['Wren', 'Ossian', 'Perpetua', 'Lorcan', 'Marisol', 'Tobiah', 'Ysolde', 'Caspian'];

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  const p = await makeRegistryPractice(services.em(), 'cohort');
  const q = await makeRegistryPractice(services.em(), 'cohort-other');
  res = p.researcher;
  otherRes = q.researcher;
  // 8 patients, one case each with a review; the last three did not agree to research use
  for (const [i, given] of names.entries()) {
    const patient = await createPatient(
      services.em(),
      p.coordinator,
      patientInput({ registryNumber: `K-${i}`, givenName: given, email: `${given.toLowerCase()}@patients.test.invalid`, researchUse: i < 5, dateOfBirth: `19${60 + i}-03-0${1 + (i % 8)}` }),
    );
    const c = await createCase(services.em(), i % 2 ? p.clinician2 : p.clinician, caseInput(patient.id, (i % 2 ? p.clinician2 : p.clinician).userId, { tooth: 36, startDate: `2022-0${1 + i}-01`, completionDate: `2022-0${1 + i}-10` }));
    await createReview(services.em(), i % 2 ? p.clinician2 : p.clinician, c.id, { reviewDate: `2023-0${1 + i}-12`, toothStatus: 'present', paiScore: i === 0 ? 4 : 1, lesionDiameterMm: i === 0 ? 3 : 0 });
  }
  cohortId = (await createCohort(services.em(), res, { name: 'Lower molars 2022' })).id;
});

const ctx = (write: WriteCohortArchive = writeCohortArchive): ExportContext => ({ em: () => services.em(), write, progressEveryMs: 0 });

async function keysUnder(prefix: string): Promise<string[]> {
  const r = await s3().send(new ListObjectsV2Command({ Bucket: env.S3_BUCKET, Prefix: prefix }));
  return (r.Contents ?? []).map((o) => o.Key!);
}

describe('the cohort builder', () => {
  it('counts only patients with research consent and says how many cases were left out', async () => {
    const all = await countCohort(services.em(), res, {});
    expect(all).toMatchObject({ cases: 5, patients: 5, leftOutCases: 3, leftOutPatients: 3 });
    const c1 = await countCohort(services.em(), res, { clinicians: 'C1' });
    expect(c1.cases + c1.leftOutCases).toBe(4);
    await expect(countCohort(services.em(), res, { clinicians: 'C9' })).rejects.toMatchObject({ status: 422 });
    await expect(countCohort(services.em(), res, { 'f.referrer': 'none' })).rejects.toMatchObject({ status: 422 });
    // the export's reader hands the writer the same consenting cases only
    const rows = [];
    for await (const r of cohortRows(services.em(), res.practiceId, { levels: {} })) rows.push(r);
    expect(rows).toHaveLength(5);
    const patients = (await services.em().getKnex()('patient').whereIn('id', rows.map((r) => r.case.patientId)).select('research_use')) as { research_use: boolean }[];
    expect(patients.every((x) => x.research_use)).toBe(true);
  });

  it('the reader hands on the same rows in the same order whatever its page size, across pages and ties on the completion date', async () => {
    const q = await makeRegistryPractice(services.em(), 'cohort-pages');
    // 8 patients with one case each; three cases share a completion date (the keyset's tie on id); one patient did not consent
    for (let i = 0; i < 8; i++) {
      const patient = await createPatient(services.em(), q.coordinator, patientInput({ registryNumber: `P-${i}`, email: `pages${i}@patients.test.invalid`, researchUse: i !== 4 }));
      const day = i < 3 ? '2021-05-10' : `2021-0${3 + (i % 6)}-2${i}`;
      await createCase(services.em(), q.clinician, caseInput(patient.id, q.clinician.userId, { startDate: '2021-01-04', completionDate: day }));
    }
    const ids = async (pageSize?: number) => {
      const out: string[] = [];
      for await (const r of cohortRows(services.em(), q.practice.id, { levels: {} }, pageSize)) out.push(r.case.id);
      return out;
    };
    const whole = await ids();
    expect(whole).toHaveLength(7);
    expect(new Set(whole).size).toBe(7);
    const order = (await services.em().getKnex()('treatment_case as c').join('patient as p', 'p.id', 'c.patient_id').where({ 'p.practice_id': q.practice.id, 'p.research_use': true }).orderBy([{ column: 'c.completion_date' }, { column: 'c.id' }]).pluck('c.id')) as string[];
    expect(whole).toEqual(order);
    // page sizes that end a page inside the tie, on the last row, one past it, and a single row per page
    for (const size of [1, 2, 3, 6, 7, 8]) expect(await ids(size)).toEqual(whole);
    // a reader that stops early closes the cursor's transaction (no connection is left holding it)
    for await (const r of cohortRows(services.em(), q.practice.id, { levels: {} }, 2)) if (r) break;
    const holding = await services.em().getKnex().raw(`select count(*)::int as n from pg_stat_activity where query like 'fetch % from cohort_rows' and state like 'idle in transaction%'`);
    expect(holding.rows[0].n).toBe(0);
  });

  it('saves numbered versions that can never be changed', async () => {
    expect(await saveCohortVersion(services.em(), res, cohortId, { filters: { from: '2022-01-01' }, variables: [], k: 2 })).toEqual({ number: 1 });
    expect(await saveCohortVersion(services.em(), res, cohortId, { filters: { kind: 'primary_treatment' }, variables: [], k: 3 })).toEqual({ number: 2 });
    await expect(services.em().getKnex()('cohort_version').where({ cohort_id: cohortId, number: 1 }).update({ k: 9 })).rejects.toThrow(/cannot be changed/);
    const view = await readCohort(services.em(), res, cohortId);
    expect(view.versions.map((v) => [v.number, v.k])).toEqual([
      [2, 3],
      [1, 2],
    ]);
    await expect(saveCohortVersion(services.em(), res, cohortId, { variables: ['patient_name'] })).rejects.toMatchObject({ status: 422 });
    await expect(readCohort(services.em(), otherRes, cohortId)).rejects.toMatchObject({ status: 404 });
  });

  it('saving the builder unchanged adds no version that says the same as the last one', async () => {
    const { id } = await createCohort(services.em(), res, { name: 'Unchanged twice' });
    const body = { filters: { kind: 'primary_treatment', from: '2021-01-01' }, variables: ['age_band', 'sex'], k: 5 };
    expect(await saveCohortVersion(services.em(), res, id, body)).toEqual({ number: 1 });
    expect(await saveCohortVersion(services.em(), res, id, { ...body, variables: ['sex', 'age_band'] })).toEqual({ number: 1, unchanged: true });
    expect(await saveCohortVersion(services.em(), res, id, { ...body, k: 6 })).toEqual({ number: 2 });
    const saved = await services.em().getKnex()('cohort_version').where({ cohort_id: id }).count('* as n').first();
    expect(saved).toMatchObject({ n: '2' });
    const events = await services.em().getKnex()('audit_event').where({ action: 'cohort.version_saved', entity_id: id }).count('* as n').first();
    expect(events).toMatchObject({ n: '2' });
  });
});

describe('the export job', () => {
  it('writes the archive of a saved version to storage, with its figures, an audit event and a working link', async () => {
    const ex = await startCohortExport(services.em(), res, cohortId, { version: 1 });
    expect(ex.status).toBe('queued');
    expect((await services.em().getKnex()('cohort_export').where({ id: ex.id }).first('object_key')).object_key).toBe(`practices/${res.practiceId}/cohorts/${cohortId}/exports/${ex.id}.zip`);
    expect(await runCohortExport(ctx(), ex.id)).toBe('done');
    const done = await readCohortExport(services.em(), res, ex.id);
    expect(done).toMatchObject({ status: 'done', figures: { cases: 5, patients: 5 } });
    expect(done.progress.done).toBe(done.progress.total);
    expect(done.figures.files).toContain('cases.csv');
    const row = (await services.em().getKnex()('cohort_export').where({ id: ex.id }).first('object_key')) as { object_key: string };
    expect((await headObject(row.object_key))?.size).toBeGreaterThan(100);
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'cohort.exported', entityId: ex.id });
    expect(event.actorId).toBe(res.userId);
    expect(event.detail).toMatchObject({ version: 1, cases: 5, patients: 5 });
    expect(event.detail).toHaveProperty('suppressed');
    // the signed link opens for the researcher of the practice only, and the download is audited
    const token = new URL(done.downloadUrl!, 'http://x').searchParams.get('token')!;
    expect((await openCohortDownload(services.em(), res, ex.id, token)).key).toBe(row.object_key);
    expect(await services.em().count(AuditEventSchema, { action: 'cohort.downloaded', entityId: ex.id })).toBe(1);
    await expect(openCohortDownload(services.em(), otherRes, ex.id, token)).rejects.toMatchObject({ status: 404 });
    const expired = signDownloadToken({ exportId: ex.id, practiceId: res.practiceId, expiresAt: new Date(Date.now() - 1000) }, deriveDownloadKey(env.NEXTAUTH_SECRET ?? ''));
    const e = await openCohortDownload(services.em(), res, ex.id, expired).catch((x: unknown) => x);
    expect(e).toBeInstanceOf(ServiceError);
    expect((e as ServiceError).status).toBe(410);
    const forged = signDownloadToken({ exportId: ex.id, practiceId: res.practiceId, expiresAt: new Date(Date.now() + 60_000) }, deriveDownloadKey('another secret of at least thirty-two bytes'));
    await expect(openCohortDownload(services.em(), res, ex.id, forged)).rejects.toMatchObject({ status: 404 });
  });

  it('a retried export replaces its object and never adds a second one', async () => {
    const ex = await startCohortExport(services.em(), res, cohortId, { version: 2 });
    const prefix = `practices/${res.practiceId}/cohorts/${cohortId}/exports/`;
    const before = await keysUnder(prefix);
    // attempt 1 writes part of the file, then fails: the queue will retry
    const failing: WriteCohortArchive = async (input, out: Writable) => {
      out.write(Buffer.alloc(1024, 1));
      await input.onProgress?.({ done: 1, total: input.total * 2 });
      throw new Error('storage hiccup');
    };
    await expect(runCohortExport(ctx(failing), ex.id)).rejects.toThrow('storage hiccup');
    expect((await readCohortExport(services.em(), res, ex.id)).status).toBe('queued');
    // attempt 2 succeeds; attempt 3 (a redelivery after a crash past the upload) writes the same key again
    expect(await runCohortExport(ctx(), ex.id)).toBe('done');
    await services.em().getKnex()('cohort_export').where({ id: ex.id }).update({ status: 'running' });
    expect(await runCohortExport(ctx(), ex.id)).toBe('done');
    const after = await keysUnder(prefix);
    expect(after.filter((k) => !before.includes(k))).toEqual([`${prefix}${ex.id}.zip`]);
    const attempts = (await services.em().getKnex()('cohort_export').where({ id: ex.id }).first('attempts')) as { attempts: number };
    expect(attempts.attempts).toBe(3);
  });

  it('cancels a queued export at once and a running one between rows, removing the partial object', async () => {
    const queued = await startCohortExport(services.em(), res, cohortId, { version: 1 });
    expect((await cancelCohortExport(services.em(), res, queued.id)).status).toBe('cancelled');
    expect(await runCohortExport(ctx(), queued.id)).toBe('skipped');

    const running = await startCohortExport(services.em(), res, cohortId, { version: 1 });
    let sawAbort = false;
    const slow: WriteCohortArchive = async (input, out: Writable) => {
      out.write(Buffer.alloc(2048, 2));
      // the researcher presses Cancel while the writer is at its first row
      await cancelCohortExport(services.em(), res, running.id);
      expect((await readCohortExport(services.em(), res, running.id)).cancelRequested).toBe(true);
      await input.onProgress?.({ done: 1, total: input.total * 2 });
      sawAbort = input.signal?.aborted ?? false;
      if (input.signal?.aborted) throw new Error('aborted');
      out.end();
      return { cases: 0, patients: 0, reviews: 0, generalised: 0, suppressed: 0, k: input.k, minL: 0, files: [] };
    };
    expect(await runCohortExport(ctx(slow), running.id)).toBe('cancelled');
    expect(sawAbort).toBe(true);
    const view = await readCohortExport(services.em(), res, running.id);
    expect(view.status).toBe('cancelled');
    expect(view.downloadUrl).toBeNull();
    const row = (await services.em().getKnex()('cohort_export').where({ id: running.id }).first('object_key')) as { object_key: string };
    expect(await headObject(row.object_key)).toBeNull();
    expect(await services.em().count(AuditEventSchema, { action: 'cohort.export_cancelled', entityId: running.id })).toBe(1);
  });

  it('is refused for another practice’s cohort and for a version never saved', async () => {
    await expect(startCohortExport(services.em(), otherRes, cohortId, { version: 1 })).rejects.toMatchObject({ status: 404 });
    await expect(startCohortExport(services.em(), res, cohortId, { version: 99 })).rejects.toMatchObject({ status: 404 });
  });
});
