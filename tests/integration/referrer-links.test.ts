import { execFileSync } from 'node:child_process';
import { afterAll, beforeEach, describe, expect, it, vi } from 'vitest';
import type { Transporter } from 'nodemailer';
import { AuditEventSchema, FilmSchema, RecallVisitSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { deriveUploadLinkSecret, uploadToken } from '@/lib/referrers/upload-token';
import { createCase } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { createReferrer } from '@/lib/services/referrers';
import { createReview } from '@/lib/services/reviews';
import { uploadFilm } from '@/lib/services/films';
import { letterFacts, requestOutcomeLetter } from '@/lib/services/referrer-letter';
import { UPLOAD_RATE } from '@/lib/services/referrer-links';
import { renderOutcomeLetter } from '@/lib/pdf/outcome-letter';
import { processSendReferrerMail, type ReferrerMailContext } from '@/jobs/send-referrer-mail';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { drawRadiograph, filmJpeg, filmPng } from '../support/film-fixtures';

/**
 * Referrer upload links and the outcome letter (issue 13) against the real PostgreSQL, Redis and S3
 * fake: the public route (as the browser sends it), expiry, single use under a race, what the
 * public JSON and page show (initials and tooth only), the letter's text (pdftotext), and the
 * letter's mail sent exactly once through a fault (a worker that dies after the relay accepted).
 * The queue is not used here: jobs are run by calling the handler, as tests/integration/recall-scan.test.ts does.
 */
const state = vi.hoisted(() => ({ actor: undefined as unknown, queued: [] as string[] }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: async () => ({ em: services.em(), actor: state.actor }),
}));
vi.mock('@/lib/services/referrer-outbox', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  // No Redis producer in this file: record what would be queued (the rows are what matter).
  queueReferrerMessage: async (_p: string, id: string) => {
    state.queued.push(id);
    return true;
  },
}));

const { POST: sendLinkRoute } = await import('@/app/api/cases/[id]/referrer-links/route');
const { GET: publicGet, POST: publicPost } = await import('@/app/api/upload/[token]/route');
const { POST: letterRoute } = await import('@/app/api/reviews/[id]/letter/route');
const { PATCH: patchReferrerRoute } = await import('@/app/api/referrers/[id]/route');

const services = await openServices();
afterAll(() => services.close());
const origin = new URL(env.APP_URL).origin;
const knex = () => services.em().getKnex();

beforeEach(() => {
  state.queued = [];
});

async function world(referrerEmail: string | null = 'dr.holm@referrers.test.invalid') {
  await resetData(services.orm, services.redis);
  const a = await makeRegistryPractice(services.em(), 'birch');
  const referrer = await createReferrer(services.em(), a.coordinator, { name: 'Dr Ilse Holm', ...(referrerEmail ? { email: referrerEmail } : {}) });
  const patient = await createPatient(services.em(), a.coordinator, patientInput({ registryNumber: 'REG-4471', givenName: 'Wren', familyName: 'Ashdown' }));
  const c = await createCase(services.em(), a.clinician, caseInput(patient.id, a.clinician.userId, { referrerId: referrer.id }));
  const visits = await services.em().find(RecallVisitSchema, { case: c.id }, { orderBy: { milestone: 'asc' } });
  return { a, referrer, patient, c, visit: visits[0]! };
}

const post = (url: string, body: unknown) =>
  new Request(url, { method: 'POST', headers: { 'content-type': 'application/json', origin }, body: JSON.stringify(body) });
const params = <T,>(p: T) => ({ params: Promise.resolve(p) });

async function sendLink(actor: Actor, caseId: string, body: unknown) {
  state.actor = actor;
  const res = await sendLinkRoute(post(`${origin}/api/cases/${caseId}/referrer-links`, body), params({ id: caseId }));
  return { status: res.status, body: (await res.json()) as Record<string, unknown> };
}

const tokenOf = (linkId: string) => uploadToken(linkId, deriveUploadLinkSecret(env.NEXTAUTH_SECRET));

function uploadRequest(token: string, files: Buffer[], ip = '198.51.100.7') {
  const form = new FormData();
  files.forEach((f, i) => form.append('file', new Blob([new Uint8Array(f)], { type: 'image/png' }), `film-${i}.png`));
  return new Request(`${origin}/api/upload/${token}`, { method: 'POST', headers: { origin, 'x-forwarded-for': ip }, body: form });
}

async function upload(token: string, files: Buffer[], ip?: string) {
  const res = await publicPost(uploadRequest(token, files, ip), params({ token }));
  return { status: res.status, body: (await res.json()) as Record<string, unknown> };
}

describe('referrer upload links', () => {
  it('sends a link through the outbox, stores only a hash, and the public JSON shows initials and tooth only', async () => {
    const w = await world();
    const sent = await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id });
    expect(sent.status).toBe(201);
    const linkId = sent.body.linkId as string;
    const token = tokenOf(linkId);
    const link = await knex()('referrer_upload_link').where({ id: linkId }).first();
    expect(link.token_hash).toMatch(/^[0-9a-f]{64}$/);
    expect(JSON.stringify(link)).not.toContain(token);
    const rows = await knex()('referrer_message').where({ subject_id: linkId });
    expect(rows).toMatchObject([{ kind: 'upload_link', status: 'queued', to_address: 'dr.holm@referrers.test.invalid' }]);
    expect(state.queued).toEqual([rows[0].id]);

    const res = await publicGet(new Request(`${origin}/api/upload/${token}`, { headers: { 'x-forwarded-for': '198.51.100.7' } }), params({ token }));
    expect(res.status).toBe(200);
    const text = await res.text();
    const view = JSON.parse(text) as Record<string, unknown>;
    expect(view).toMatchObject({ state: 'open', patientInitials: 'W. A.', tooth: 36 });
    expect(Object.keys(view).sort()).toEqual(['expiresAt', 'maxBytes', 'maxFiles', 'message', 'patientInitials', 'practiceName', 'state', 'tooth']);
    for (const secret of ['Wren', 'Ashdown', '1971', 'REG-4471', 'wren.ashdown', w.patient.id, w.c.id, w.visit.id]) expect(text).not.toContain(secret);
    expect(await services.em().count(AuditEventSchema, { action: 'referrer.link_opened' })).toBe(1);
  });

  it('takes one upload of several files, attached to the visit as unread referrer films; a second upload is 410', async () => {
    const w = await world();
    const linkId = (await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id })).body.linkId as string;
    const token = tokenOf(linkId);
    const files = [await filmPng(drawRadiograph(300, 240, 3)), await filmJpeg(drawRadiograph(320, 240, 4))];
    const first = await upload(token, files);
    expect(first).toMatchObject({ status: 201, body: { received: 2 } });
    const films = await services.em().find(FilmSchema, { case: w.c.id });
    expect(films).toHaveLength(2);
    for (const f of films) expect({ source: f.source, visit: f.visit?.id, uploadedBy: f.uploadedBy, role: f.role, review: f.review }).toEqual({ source: 'referrer', visit: w.visit.id, uploadedBy: null, role: 'follow_up', review: null });
    const again = await upload(token, [await filmPng(drawRadiograph(200, 200, 9))]);
    expect(again.status).toBe(410);
    expect(again.body).toMatchObject({ error: 'gone' });
    expect(await services.em().count(FilmSchema, { case: w.c.id })).toBe(2);
    expect(await services.em().count(AuditEventSchema, { action: 'referrer.upload_received' })).toBe(1);
    expect(await services.em().count(AuditEventSchema, { action: 'referrer.upload_refused' })).toBe(1);
  });

  it('two submissions at once: exactly one is accepted, the other gets a clear 410 and keeps nothing', async () => {
    const w = await world();
    const token = tokenOf((await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id })).body.linkId as string);
    const [a, b] = await Promise.all([upload(token, [await filmPng(drawRadiograph(300, 240, 5))]), upload(token, [await filmPng(drawRadiograph(300, 240, 6))])]);
    expect([a.status, b.status].sort()).toEqual([201, 410]);
    const loser = a.status === 410 ? a : b;
    expect(loser.body.message).toMatch(/already been used/);
    expect(await services.em().count(FilmSchema, { case: w.c.id })).toBe(1);
  });

  it('an expired link is 410 and takes nothing; a refused file leaves the link usable; an unknown token is 404', async () => {
    const w = await world();
    const linkId = (await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id, days: 1 })).body.linkId as string;
    const token = tokenOf(linkId);
    const bad = await upload(token, [Buffer.from('%PDF-1.4 not a film at all')]);
    expect(bad.status).toBe(415);
    expect((await knex()('referrer_upload_link').where({ id: linkId }).first()).used_at).toBeNull();
    await knex()('referrer_upload_link').where({ id: linkId }).update({ expires_at: new Date(Date.now() - 1000) });
    const late = await upload(token, [await filmPng(drawRadiograph(200, 160, 7))]);
    expect(late).toMatchObject({ status: 410, body: { error: 'gone' } });
    expect(late.body.message).toMatch(/expired/);
    const get = await publicGet(new Request(`${origin}/api/upload/${token}`), params({ token }));
    expect(get.status).toBe(410);
    expect(await services.em().count(FilmSchema, { case: w.c.id })).toBe(0);
    const unknown = tokenOf('00000000-0000-4000-8000-000000000000');
    expect((await upload(unknown, [await filmPng(drawRadiograph(100, 100, 1))])).status).toBe(404);
    expect((await upload('short', [])).status).toBe(404);
  });

  it('refuses a post from another site and answers 429 past the address’s budget', async () => {
    const w = await world();
    const token = tokenOf((await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id })).body.linkId as string);
    const form = new FormData();
    form.append('file', new Blob([new Uint8Array(await filmPng(drawRadiograph(100, 100, 2)))]), 'a.png');
    const cross = await publicPost(new Request(`${origin}/api/upload/${token}`, { method: 'POST', headers: { origin: 'https://evil.example' }, body: form }), params({ token }));
    expect(cross.status).toBe(403);
    let last = 0;
    for (let i = 0; i <= UPLOAD_RATE.points; i++) last = (await publicGet(new Request(`${origin}/api/upload/${token}`, { headers: { 'x-forwarded-for': '203.0.113.99' } }), params({ token }))).status;
    expect(last).toBe(429);
  });

  it('422 when the referrer has no e-mail address; the auditor may not send links', async () => {
    const w = await world(null);
    const sent = await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id });
    expect(sent.status).toBe(422);
    expect(sent.body.message).toMatch(/no e-mail address/);
    expect((await sendLink(w.a.auditor, w.c.id, { visitId: w.visit.id })).status).toBe(403);
    expect(await knex()('referrer_message').count('* as n').first()).toMatchObject({ n: '0' });
  });

  it('the missing address is added to the referrer (PATCH /api/referrers/:id, audited) and the link then goes out; bad, taken or foreign input is refused', async () => {
    const w = await world(null);
    expect((await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id })).status).toBe(422);
    const patch = async (actor: Actor, id: string, body: unknown) => {
      state.actor = actor;
      const req = new Request(`${origin}/api/referrers/${id}`, { method: 'PATCH', headers: { 'content-type': 'application/json', origin }, body: JSON.stringify(body) });
      const res = await patchReferrerRoute(req, params({ id }));
      return { status: res.status, body: (await res.json()) as Record<string, unknown> };
    };
    expect((await patch(w.a.coordinator, w.referrer.id, { email: 'not an address' })).status).toBe(422);
    const other = await createReferrer(services.em(), w.a.coordinator, { name: 'Dr Pell Arnou', email: 'dr.arnou@referrers.test.invalid' });
    expect((await patch(w.a.coordinator, w.referrer.id, { email: other.email })).status).toBe(409);
    expect((await patch(w.a.auditor, w.referrer.id, { email: 'dr.holm@referrers.test.invalid' })).status).toBe(403);
    const elsewhere = await makeRegistryPractice(services.em(), 'alder');
    expect((await patch(elsewhere.coordinator, w.referrer.id, { email: 'dr.holm@referrers.test.invalid' })).status).toBe(404);
    expect(await knex()('referrer').where({ id: w.referrer.id }).first('email')).toMatchObject({ email: null });

    const saved = await patch(w.a.coordinator, w.referrer.id, { email: 'dr.holm@referrers.test.invalid' });
    expect(saved).toMatchObject({ status: 200, body: { referrer: { id: w.referrer.id, email: 'dr.holm@referrers.test.invalid' } } });
    const events = await services.em().find(AuditEventSchema, { action: 'referrer.updated', entityId: w.referrer.id });
    expect(events.map((e) => e.detail)).toEqual([{ fields: ['email'] }]);
    expect(JSON.stringify(events.map((e) => e.detail))).not.toContain('dr.holm'); // the audit names the field, not the address

    const sent = await sendLink(w.a.coordinator, w.c.id, { visitId: w.visit.id });
    expect(sent).toMatchObject({ status: 201, body: { to: 'dr.holm@referrers.test.invalid' } });
  });
});

/** The text of a PDF by pdftotext (poppler-utils); throws (the test fails) when the tool is missing. */
const pdfText = (pdf: Buffer) => execFileSync('pdftotext', ['-enc', 'UTF-8', '-', '-'], { input: pdf }).toString('utf8').replace(/\s+/g, ' ');

describe('the outcome letter', () => {
  async function reviewed() {
    const w = await world();
    await uploadFilm(services.em(), w.a.clinician, w.c.id, { role: 'follow_up', visitId: w.visit.id }, await filmPng(drawRadiograph(320, 260, 11)));
    const r = await createReview(services.em(), w.a.clinician, w.c.id, {
      reviewDate: '2025-01-20',
      toothStatus: 'present',
      paiScore: 3,
      lesionDiameterMm: 2.5,
      tenderToPercussion: true,
      painOnBiting: false,
    });
    return { ...w, review: r.review };
  }

  it('says the tooth, treatment, findings, outcome with the caution and the next step, and carries the film', async () => {
    const w = await reviewed();
    const facts = await letterFacts(services.em(), w.a.practice.id, w.review.id);
    expect(facts.thumbnail).not.toBeNull();
    const pdf = await renderOutcomeLetter(facts);
    const text = pdfText(pdf);
    for (const want of ['Follow-up of tooth 36', 'Dear Dr Ilse Holm', 'Primary', 'Periapical index (PAI) 3 of 5', '2.5 mm', 'Tender to percussion', 'does not diagnose', 'licensed practice', 'Next step', 'Follow-up film (thumbnail)']) {
      expect(text).toContain(want);
    }
    expect(text).toMatch(/follow-up review is the \d+-month recall|No further follow-up review/);
    // An image is in the PDF (the thumbnail).
    expect(pdf.includes(Buffer.from('/Subtype /Image'))).toBe(true);
  });

  it('is queued once per review through the route, and sent exactly once although the first worker died after the relay accepted', async () => {
    const w = await reviewed();
    state.actor = w.a.coordinator;
    const first = await letterRoute(new Request(`${origin}/api/reviews/${w.review.id}/letter`, { method: 'POST', headers: { origin } }), params({ id: w.review.id }));
    expect(first.status).toBe(201);
    const second = await letterRoute(new Request(`${origin}/api/reviews/${w.review.id}/letter`, { method: 'POST', headers: { origin } }), params({ id: w.review.id }));
    expect(second.status).toBe(200);
    expect(await second.json()).toMatchObject({ created: false });
    const [row] = await knex()('referrer_message').where({ kind: 'outcome_letter', subject_id: w.review.id });
    expect(state.queued).toEqual([row.id]);

    // The relay: accepts and stores; the first worker "dies" right after the relay's 250 (the finish never runs).
    const relay: { messageId: string; to: string; attachments: number }[] = [];
    const accept = async (m: { messageId?: string; to?: unknown; attachments?: unknown[] }) => {
      relay.push({ messageId: m.messageId!, to: String(m.to), attachments: m.attachments?.length ?? 0 });
      return {};
    };
    let clock = new Date();
    const ctx = (sendMail: Transporter['sendMail'], deliveryCheck = async (id: string, to: string) => relay.some((x) => x.messageId === id && x.to === to)): ReferrerMailContext => ({
      em: () => services.em(),
      transport: { sendMail },
      deliveryCheck,
      uploadKey: deriveUploadLinkSecret(env.NEXTAUTH_SECRET),
      appUrl: env.APP_URL,
      mailFrom: env.MAIL_FROM,
      leaseMs: 2_000,
      now: () => clock,
    });
    const job = { data: { practiceId: w.a.practice.id, messageId: row.id } };
    const dies = (async (m: never) => {
      await accept(m);
      throw Object.assign(new Error('worker killed'), { code: 'ESOCKET' });
    }) as unknown as Transporter['sendMail'];
    await expect(processSendReferrerMail(ctx(dies), job)).rejects.toThrow('worker killed');
    expect((await knex()('referrer_message').where({ id: row.id }).first()).status).toBe('sending');
    // A retry while the claim is live waits; after the lease the delivery check finds the message.
    await expect(processSendReferrerMail(ctx(accept as unknown as Transporter['sendMail']), job)).rejects.toThrow(/another attempt/);
    clock = new Date(clock.getTime() + 5_000);
    expect(await processSendReferrerMail(ctx(accept as unknown as Transporter['sendMail']), job)).toEqual({ outcome: 'reconciled', rowId: row.id });
    expect(await processSendReferrerMail(ctx(accept as unknown as Transporter['sendMail']), job)).toEqual({ outcome: 'already_sent', rowId: row.id });
    expect(relay).toEqual([{ messageId: `<referrer-${row.id}@${env.MAIL_FROM.match(/@([^>]+)>?/)![1]}>`, to: 'dr.holm@referrers.test.invalid', attachments: 1 }]);
    expect(await knex()('referrer_message').where({ id: row.id }).first()).toMatchObject({ status: 'sent', attempts: 2 });
    expect(await services.em().count(AuditEventSchema, { action: 'referrer.mail_sent' })).toBe(1);
  });

  it('a relay that refuses for now (451) is retried: the letter goes out once', async () => {
    const w = await reviewed();
    await requestOutcomeLetter(services.em(), w.a.clinician, w.review.id);
    const [row] = await knex()('referrer_message').where({ subject_id: w.review.id });
    let refusals = 2;
    const sent: string[] = [];
    const sendMail = (async (m: { messageId: string }) => {
      if (refusals-- > 0) throw Object.assign(new Error('451 try later'), { responseCode: 451 });
      sent.push(m.messageId);
      return {};
    }) as unknown as Transporter['sendMail'];
    const c: ReferrerMailContext = { em: () => services.em(), transport: { sendMail }, uploadKey: deriveUploadLinkSecret(env.NEXTAUTH_SECRET), appUrl: env.APP_URL, mailFrom: env.MAIL_FROM, leaseMs: 2_000 };
    const job = { data: { practiceId: w.a.practice.id, messageId: row.id } };
    await expect(processSendReferrerMail(c, job)).rejects.toThrow(/refused the message for now/);
    await expect(processSendReferrerMail(c, job)).rejects.toThrow(/refused the message for now/);
    expect(await processSendReferrerMail(c, job)).toMatchObject({ outcome: 'sent' });
    expect(await processSendReferrerMail(c, job)).toMatchObject({ outcome: 'already_sent' });
    expect(sent).toHaveLength(1);
  });
});
