import { readFileSync } from 'node:fs';
import path from 'node:path';
import { DeleteObjectCommand, ListObjectsV2Command, S3Client } from '@aws-sdk/client-s3';
import sharp from 'sharp';
import { afterAll, beforeEach, describe, expect, it, vi } from 'vitest';
import { AuditEventSchema, FilmSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { createCase } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { uploadFilm, type FilmView } from '@/lib/services/films';
import { getObject, s3 } from '@/lib/storage/s3';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { TS, drawRadiograph, filmDicom } from '../support/film-fixtures';

/**
 * Films (issue 13) against the real PostgreSQL and the S3 fake (s3rver) that npm test starts:
 * upload through the route handler (multipart, as the browser sends it), what is stored, what is
 * refused and how, retries, no orphans, the serving route's headers, the audit trail, roles and
 * another practice's ids. Only the session is replaced (getRequestContext), as in fuzz-routes.
 */
const state = vi.hoisted(() => ({ actor: undefined as unknown }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: async () => ({ em: services.em(), actor: state.actor }),
}));

const { GET: listRoute, POST: uploadRoute } = await import('@/app/api/cases/[id]/films/route');
const { GET: fileRoute } = await import('@/app/api/films/[id]/[variant]/route');

const services = await openServices();
afterAll(() => services.close());

const fixture = (name: string) => readFileSync(path.join(import.meta.dirname, '../support/films', name));
const origin = new URL(env.APP_URL).origin;

async function world() {
  await resetData(services.orm, services.redis);
  const a = await makeRegistryPractice(services.em(), 'alder');
  const patient = await createPatient(services.em(), a.coordinator, patientInput());
  const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId));
  return { a, patient, c };
}

/** An upload's answer: the film, or a refusal. */
interface Answer {
  film: FilmView;
  created: boolean;
  error?: string;
  message?: string;
  fieldErrors: Record<string, string[]>;
}

function as(actor: Actor) {
  state.actor = actor;
}

async function upload(caseId: string, bytes: Uint8Array | Buffer, name: string, fields: Record<string, string> = { role: 'follow_up' }, type = 'application/octet-stream') {
  const form = new FormData();
  form.set('file', new Blob([new Uint8Array(bytes)], { type }), name);
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  const req = new Request(`${origin}/api/cases/${caseId}/films`, { method: 'POST', headers: { Origin: origin, 'Sec-Fetch-Site': 'same-origin' }, body: form });
  const res = await uploadRoute(req, { params: Promise.resolve({ id: caseId }) });
  return { status: res.status, body: (await res.json()) as Answer };
}

async function fetchFile(id: string, variant: string) {
  const res = await fileRoute(new Request(`${origin}/api/films/${id}/${variant}`), { params: Promise.resolve({ id, variant }) });
  return { res, bytes: new Uint8Array(await res.arrayBuffer()) };
}

async function list(caseId: string) {
  const res = await listRoute(new Request(`${origin}/api/cases/${caseId}/films`), { params: Promise.resolve({ id: caseId }) });
  return { status: res.status, body: (await res.json()) as { films: FilmView[] } };
}

/** Every object key the bucket holds under a case (through the app's own client). */
async function keysOf(practiceId: string, caseId: string): Promise<string[]> {
  const r = await s3().send(new ListObjectsV2Command({ Bucket: env.S3_BUCKET, Prefix: `practices/${practiceId}/cases/${caseId}/` }));
  return (r.Contents ?? []).map((o) => o.Key!).sort();
}

describe('uploading films', () => {
  let w: Awaited<ReturnType<typeof world>>;
  beforeEach(async () => {
    w = await world();
    as(w.a.clinician);
  });

  it.each([
    ['radiograph.png', 'PNG', 'image/png', null],
    ['radiograph.jpg', 'JPEG', 'image/jpeg', null],
    ['explicit-le.dcm', 'DICOM', 'image/png', TS.explicitLE],
    ['implicit-le.dcm', 'DICOM', 'image/png', TS.implicitLE],
    ['jpeg-lossless-57.dcm', 'DICOM', 'image/png', TS.jpegLossless57],
    ['jpeg-lossless-70.dcm', 'DICOM', 'image/png', TS.jpegLossless70],
  ])('%s → 201, three objects stored, a thumbnail within 320 px', async (name, format, webType, ts) => {
    const r = await upload(w.c.id, fixture(name), name);
    expect(r.status).toBe(201);
    expect(r.body.created).toBe(true);
    const film = r.body.film;
    expect(film).toMatchObject({ caseId: w.c.id, role: 'follow_up', roleLabel: 'Follow-up', format, width: 160, height: 120, transferSyntax: ts });
    const stored = await services.em().findOneOrFail(FilmSchema, film.id);
    const thumb = await getObject(stored.thumbnailKey);
    expect(thumb).not.toBeNull();
    const meta = await sharp(thumb!).metadata();
    expect(meta.format).toBe('jpeg');
    expect(Math.max(meta.width!, meta.height!)).toBeLessThanOrEqual(320);
    expect((await sharp((await getObject(stored.webKey))!).metadata()).format).toBe(webType === 'image/png' ? 'png' : 'jpeg');
    expect(await keysOf(w.a.practice.id, w.c.id)).toHaveLength(3);
  });

  it('keeps the DICOM tags Lamina reads, the original file byte for byte, and never sends the DICOM patient', async () => {
    const bytes = fixture('jpeg-lossless-70.dcm');
    const r = await upload(w.c.id, bytes, 'anything.bin');
    expect(r.body.film).toMatchObject({
      pixelSpacingMm: [0.019, 0.021],
      spacingSource: 'pixel_spacing',
      acquisitionDate: '2025-03-10',
      modality: 'IO',
      patientMismatch: false,
      contentType: 'application/dicom',
    });
    const text = JSON.stringify(r.body);
    expect(text).not.toMatch(/Ashdown|Wren|T-0001|dicomPatient|Key"/);
    const original = await fetchFile(r.body.film.id, 'original');
    expect(Buffer.from(original.bytes).equals(bytes)).toBe(true);
    const imager = await upload(w.c.id, fixture('implicit-le.dcm'), 'x.dcm', { role: 'post_fill' });
    expect(imager.body.film).toMatchObject({ pixelSpacingMm: [0.025, 0.025], spacingSource: 'imager_pixel_spacing' });
  });

  it('warns when the DICOM patient disagrees with the case’s patient, without naming them', async () => {
    const other = filmDicom(drawRadiograph(64, 48, 2), { patientName: 'Quill^Runa', patientId: 'Q-77' });
    const r = await upload(w.c.id, other, 'other.dcm');
    expect(r.status).toBe(201);
    expect(r.body.film.patientMismatch).toBe(true);
    expect(JSON.stringify(r.body)).not.toMatch(/Quill|Runa|Q-77/);
    const listed = await list(w.c.id);
    expect(listed.body.films[0]!.patientMismatch).toBe(true);
    expect(JSON.stringify(listed.body)).not.toMatch(/Quill|Runa|Q-77/);
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'film.uploaded', entityId: w.c.id });
    expect(event.detail).toMatchObject({ patientMismatch: true });
  });

  it('strips the metadata of a JPEG (its EXIF names a sensor and a patient)', async () => {
    const jpeg = fixture('radiograph.jpg');
    expect((await sharp(jpeg).metadata()).exif).toBeDefined();
    const r = await upload(w.c.id, jpeg, 'r.jpg');
    for (const variant of ['original', 'web', 'thumbnail']) {
      const { bytes } = await fetchFile(r.body.film.id, variant);
      const meta = await sharp(bytes).metadata();
      expect(meta.exif, variant).toBeUndefined();
      expect(Buffer.from(bytes).includes('Quill'), variant).toBe(false);
    }
  });

  it('a file that is no image, renamed .png and sent as image/png → 415, nothing stored', async () => {
    const pdf = Buffer.from('%PDF-1.7\n1 0 obj\n<< /Type /Catalog >>\nendobj\ntrailer\n<< >>\n%%EOF\n');
    const r = await upload(w.c.id, pdf, 'radiograph.png', { role: 'follow_up' }, 'image/png');
    expect(r.status).toBe(415);
    expect(r.body).toMatchObject({ error: 'unsupported_media_type' });
    expect(r.body.message).toMatch(/not a PNG, JPEG or DICOM image \(its content is application\/pdf\), whatever its name says/);
    expect(await keysOf(w.a.practice.id, w.c.id)).toEqual([]);
    expect(await services.em().count(FilmSchema, {})).toBe(0);
  });

  it('a file over the limit → 413 (by its declared length before reading, and by its size)', async () => {
    const max = env.FILM_MAX_MB * 1024 * 1024;
    const big = new Uint8Array(max + 1);
    big.set(fixture('radiograph.png'));
    const r = await upload(w.c.id, big, 'big.png');
    expect(r.status).toBe(413);
    expect(r.body).toMatchObject({ error: 'payload_too_large', message: `The file is larger than ${env.FILM_MAX_MB} MB, the largest film Lamina takes.` });
    const req = new Request(`${origin}/api/cases/${w.c.id}/films`, {
      method: 'POST',
      headers: { Origin: origin, 'Sec-Fetch-Site': 'same-origin', 'Content-Type': 'multipart/form-data; boundary=x', 'Content-Length': String(max * 2) },
      body: 'x',
    });
    expect((await uploadRoute(req, { params: Promise.resolve({ id: w.c.id }) })).status).toBe(413);
  });

  it('a truncated DICOM and a corrupt DICOM → 422 saying so; a damaged PNG → 422', async () => {
    const whole = fixture('explicit-le.dcm');
    const cut = await upload(w.c.id, whole.subarray(0, whole.length - 2000), 'cut.dcm');
    expect(cut.status).toBe(422);
    expect(cut.body.message).toMatch(/ends .*cut short/);
    const corrupt = Buffer.from(whole);
    corrupt.fill(0xab, 140, 240);
    const bad = await upload(w.c.id, corrupt, 'bad.dcm');
    expect(bad.status).toBe(422);
    expect(bad.body.message).toMatch(/could not be read/);
    const png = fixture('radiograph.png');
    const badPng = await upload(w.c.id, png.subarray(0, 400), 'cut.png');
    expect(badPng.status).toBe(422);
    expect(await services.em().count(FilmSchema, {})).toBe(0);
  });

  it('a compressed transfer syntax Lamina does not read (JPEG 2000) → 415 naming it and its UID', async () => {
    const r = await upload(w.c.id, fixture('jpeg2000.dcm'), 'j2k.dcm');
    expect(r.status).toBe(415);
    expect(r.body.message).toContain('JPEG 2000 Image Compression (Lossless Only) (1.2.840.10008.1.2.4.90)');
    expect(r.body.fieldErrors.file![0]).toContain('1.2.840.10008.1.2.4.90');
  });

  it('a retry of the same file for the same role keeps one film; another role is another film', async () => {
    const bytes = fixture('explicit-le.dcm');
    const first = await upload(w.c.id, bytes, 'a.dcm');
    const again = await upload(w.c.id, bytes, 'renamed.dcm');
    expect([first.status, again.status]).toEqual([201, 200]);
    expect(again.body).toMatchObject({ created: false, film: { id: first.body.film.id } });
    expect(await services.em().count(FilmSchema, { case: w.c.id })).toBe(1);
    expect(await keysOf(w.a.practice.id, w.c.id)).toHaveLength(3);
    const baseline = await upload(w.c.id, bytes, 'a.dcm', { role: 'post_fill' });
    expect(baseline.status).toBe(201);
    expect(await services.em().count(FilmSchema, { case: w.c.id })).toBe(2);
    // Two at once: one film, no orphans.
    const png = fixture('radiograph.png');
    const both = await Promise.all([upload(w.c.id, png, 'p.png'), upload(w.c.id, png, 'p.png')]);
    expect(both.map((b) => b.status).sort()).toEqual([200, 201]);
    expect(both[0]!.body.film.id).toBe(both[1]!.body.film.id);
    expect(await services.em().count(FilmSchema, { case: w.c.id })).toBe(3);
    expect(await keysOf(w.a.practice.id, w.c.id)).toHaveLength(9);
    const events = await services.em().find(AuditEventSchema, { action: 'film.upload_repeated' });
    expect(events.length).toBe(2);
  });

  it('no orphans: a failed row write removes the objects; a failed object write leaves no row', async () => {
    const em = services.em();
    const flush = em.flush.bind(em);
    let calls = 0;
    vi.spyOn(em, 'flush').mockImplementation(async () => {
      calls += 1;
      if (calls === 1) throw new Error('database went away');
      return flush();
    });
    await expect(uploadFilm(em, w.a.clinician, w.c.id, { role: 'follow_up' }, new Uint8Array(fixture('radiograph.png')))).rejects.toThrow('database went away');
    expect(await keysOf(w.a.practice.id, w.c.id)).toEqual([]);
    expect(await services.em().count(FilmSchema, {})).toBe(0);

    const g = globalThis as unknown as { __laminaS3?: unknown };
    const real = g.__laminaS3;
    g.__laminaS3 = new S3Client({ endpoint: 'http://127.0.0.1:9', forcePathStyle: true, region: 'us-east-1', credentials: { accessKeyId: 'x', secretAccessKey: 'x' }, maxAttempts: 1 });
    try {
      const r = await upload(w.c.id, fixture('radiograph.png'), 'r.png');
      expect(r.status).toBe(503);
      expect(r.body.message).toMatch(/nothing was kept/);
    } finally {
      g.__laminaS3 = real;
    }
    expect(await services.em().count(FilmSchema, {})).toBe(0);
    // And the retry after the failure works, once.
    expect((await upload(w.c.id, fixture('radiograph.png'), 'r.png')).status).toBe(201);
  });

  it('refuses a bad role, a visit of another case, no file', async () => {
    expect((await upload(w.c.id, fixture('radiograph.png'), 'r.png', { role: 'selfie' })).body.fieldErrors.role).toBeDefined();
    const other = await createCase(services.em(), w.a.clinician, caseInput(w.patient.id, w.a.clinician.userId, { tooth: 46 }));
    const otherVisit = (await services.em().getKnex()('recall_visit').where({ case_id: other.id }).first('id')) as { id: string };
    const r = await upload(w.c.id, fixture('radiograph.png'), 'r.png', { role: 'follow_up', visitId: otherVisit.id });
    expect(r).toMatchObject({ status: 422, body: { fieldErrors: { visitId: ['Choose a recall visit of this case.'] } } });
    const ownVisit = (await services.em().getKnex()('recall_visit').where({ case_id: w.c.id }).first('id')) as { id: string };
    const ok = await upload(w.c.id, fixture('radiograph.png'), 'r.png', { role: 'follow_up', visitId: ownVisit.id });
    expect(ok.body.film.visitId).toBe(ownVisit.id);
    const form = new FormData();
    form.set('role', 'follow_up');
    const res = await uploadRoute(new Request(`${origin}/api/cases/${w.c.id}/films`, { method: 'POST', headers: { Origin: origin, 'Sec-Fetch-Site': 'same-origin' }, body: form }), {
      params: Promise.resolve({ id: w.c.id }),
    });
    expect(res.status).toBe(422);
  });
});

describe('serving films', () => {
  it('only through the route: no-store, nosniff, a disposition naming the film; every view audited', async () => {
    const w = await world();
    as(w.a.clinician);
    const r = await upload(w.c.id, fixture('explicit-le.dcm'), 'x.dcm');
    const id = r.body.film.id as string;
    as(w.a.auditor);
    const expected = {
      thumbnail: ['image/jpeg', `inline; filename="film-${id.slice(0, 8)}-thumbnail.jpg"`],
      web: ['image/png', `inline; filename="film-${id.slice(0, 8)}-web.png"`],
      original: ['application/dicom', `attachment; filename="film-${id.slice(0, 8)}-original.dcm"`],
    };
    for (const [variant, [type, disposition]] of Object.entries(expected)) {
      const { res, bytes } = await fetchFile(id, variant);
      expect(res.status).toBe(200);
      expect(res.headers.get('content-type')).toBe(type);
      expect(res.headers.get('content-disposition')).toBe(disposition);
      expect(res.headers.get('cache-control')).toBe('no-store');
      expect(res.headers.get('x-content-type-options')).toBe('nosniff');
      expect(Number(res.headers.get('content-length'))).toBe(bytes.byteLength);
    }
    expect((await fetchFile(id, 'exif')).res.status).toBe(404);
    expect((await fetchFile('not-a-uuid', 'web')).res.status).toBe(404);
    const views = await services.em().find(AuditEventSchema, { action: 'film.viewed' }, { orderBy: { at: 'asc' } });
    expect(views.map((v) => [v.actorId, v.entityId, (v.detail as { variant: string }).variant, (v.detail as { film: string }).film])).toEqual([
      [w.a.auditor.userId, w.c.id, 'thumbnail', id],
      [w.a.auditor.userId, w.c.id, 'web', id],
      [w.a.auditor.userId, w.c.id, 'original', id],
    ]);
    await list(w.c.id);
    expect(await services.em().count(AuditEventSchema, { action: 'film.list', entityId: w.c.id })).toBe(1);
  });

  it('a rendition is read from the store once, then from the process’s copy; the row is still asked first and every view audited', async () => {
    const w = await world();
    as(w.a.clinician);
    const id = (await upload(w.c.id, fixture('radiograph.png'), 'r.png')).body.film.id as string;
    const first = { thumbnail: (await fetchFile(id, 'thumbnail')).bytes, web: (await fetchFile(id, 'web')).bytes };
    // the objects go from the store behind the app's back: the renditions are still served, the original is not
    for (const key of await keysOf(w.a.practice.id, w.c.id)) await s3().send(new DeleteObjectCommand({ Bucket: env.S3_BUCKET, Key: key }));
    for (const variant of ['thumbnail', 'web'] as const) {
      const again = await fetchFile(id, variant);
      expect(again.res.status).toBe(200);
      expect(Buffer.from(again.bytes).equals(Buffer.from(first[variant]))).toBe(true);
    }
    expect((await fetchFile(id, 'original')).res.status).toBe(404);
    // an archived film answers 404 though its copy is kept; another practice never reaches the copy
    await services.em().getConnection().execute('update film set archived_at = now() where id = ?', [id]);
    expect((await fetchFile(id, 'thumbnail')).res.status).toBe(404);
    expect(await services.em().count(AuditEventSchema, { action: 'film.viewed' })).toBe(4);
  });

  it('roles: the lead reads but does not upload; the administrator and the researcher see nothing', async () => {
    const w = await world();
    as(w.a.coordinator);
    const r = await upload(w.c.id, fixture('radiograph.png'), 'r.png');
    expect(r.status).toBe(201);
    const id = r.body.film.id as string;
    as(w.a.auditor);
    expect((await upload(w.c.id, fixture('radiograph.jpg'), 'r.jpg')).status).toBe(403);
    expect((await fetchFile(id, 'web')).res.status).toBe(200);
    for (const actor of [w.a.admin, w.a.researcher]) {
      as(actor);
      expect((await fetchFile(id, 'thumbnail')).res.status).toBe(403);
      expect((await list(w.c.id)).status).toBe(403);
      expect((await upload(w.c.id, fixture('radiograph.jpg'), 'r.jpg')).status).toBe(403);
    }
  });

  it('another practice’s film and case answer 404, as if they did not exist', async () => {
    const w = await world();
    as(w.a.clinician);
    const mine = await upload(w.c.id, fixture('radiograph.png'), 'r.png');
    const b = await makeRegistryPractice(services.em(), 'birch');
    as(b.clinician);
    for (const variant of ['thumbnail', 'web', 'original']) expect((await fetchFile(mine.body.film.id, variant)).res.status).toBe(404);
    expect((await list(w.c.id)).status).toBe(404);
    expect((await upload(w.c.id, fixture('radiograph.png'), 'r.png')).status).toBe(404);
    expect(await services.em().count(FilmSchema, {})).toBe(1);
    expect(await services.em().count(AuditEventSchema, { action: 'film.viewed' })).toBe(0);
  });
});
