import 'server-only';
import { randomUUID } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import { UniqueConstraintViolationException } from '@mikro-orm/core';
import type { Redis } from 'ioredis';
import { RateLimiterRedis, RateLimiterRes } from 'rate-limiter-flexible';
import { FilmSchema, PatientSchema, RecallVisitSchema, ReferrerSchema, ReferrerUploadLinkSchema } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import type { Origin } from '@/lib/auth/origin';
import { env } from '@/lib/env';
import type { ProcessedFilm } from '@/lib/films/process';
import {
  GONE_MESSAGES,
  deriveUploadLinkSecret,
  initialsOf,
  isWellFormedToken,
  linkState,
  tokenHash,
  uploadToken,
  type LinkState,
} from '@/lib/referrers/upload-token';
import { UploadLinkRequest } from '@/lib/schemas/referrer-mail';
import { audit } from './audit';
import { NotFoundError, RateLimitedError, ServiceError, ValidationError } from './errors';
import { checkFilm, filmMaxBytes, removeQuietly, storeFilmObjects, filmRowData, type StoredFilmObjects } from './films';
import { parseInput } from './parse';
import { UnavailableError } from './unavailable';
import { insertReferrerMessage, queueReferrerMessage } from './referrer-outbox';
import { findCase, knexOf } from './registry-common';

/**
 * Upload links for referring dentists (issue 13). The coordinator (or a clinician) sends the case's
 * referrer a link for ONE recall visit; the referrer, without an account, opens /upload/<token>,
 * which shows the patient's initials, the tooth and the expiry only, and sends one upload (one or
 * several files). The films join the case at that visit as `source: referrer`, unread.
 *
 * - The token is never stored (lib/referrers/upload-token.ts: HMAC of the row id; the row keeps
 *   its SHA-256). The e-mail goes through the referrer outbox (lib/services/referrer-outbox.ts).
 * - Single use: the files are checked and stored first (nothing consumed when a file is refused),
 *   then ONE compare-and-set (`used_at is null and expires_at > now`) consumes the link in the
 *   transaction that writes the film rows. Of two submissions at once exactly one wins; the other
 *   gets 410 and its objects are removed.
 * - Rate limited per client address (rate-limiter-flexible on Redis), audited without an actor.
 */

/** At most this many files in one upload. */
export const UPLOAD_MAX_FILES = 10;

const linkKey = () => deriveUploadLinkSecret(env.NEXTAUTH_SECRET);

/** The public URL of a link row (also used by the mail job: the same on every attempt). */
export function uploadLinkUrl(linkId: string, appUrl: string = env.APP_URL, key: Buffer = linkKey()): string {
  return new URL(`/upload/${uploadToken(linkId, key)}`, appUrl).toString();
}

export interface SentLink {
  linkId: string;
  expiresAt: string;
  to: string;
  /** False when Redis was down: the row waits for the next scan. */
  queued: boolean;
}

/** Sends the case's referrer an upload link for one visit, through the outbox. */
export async function sendUploadLink(em: EntityManager, actor: Actor, caseId: string, raw: unknown, now = new Date()): Promise<SentLink> {
  assertCan(actor, 'referrer.send');
  const c = await findCase(em, actor, caseId);
  const input = parseInput(UploadLinkRequest, raw);
  if (c.archivedAt) throw new ValidationError('This case is archived: send no links from it.');
  const visit = await em.findOne(RecallVisitSchema, { id: input.visitId, case: c.id, practice: actor.practiceId }, { fields: ['id', 'milestone'] });
  if (!visit) throw new ValidationError('Some fields need attention.', { visitId: ['Choose a recall visit of this case.'] });
  const referrer = await referrerWithAddress(em, actor.practiceId, c.referrer?.id ?? null);

  const linkId = randomUUID();
  const link = em.create(ReferrerUploadLinkSchema, {
    id: linkId,
    practice: actor.practiceId,
    case: c.id,
    visit: visit.id,
    referrer: referrer.id,
    tokenHash: tokenHash(uploadToken(linkId, linkKey())),
    expiresAt: new Date(now.getTime() + input.days * 24 * 60 * 60 * 1000),
    createdBy: actor.userId,
  });
  const row = await em.transactional(async (tx) => {
    tx.persist(link);
    await tx.flush();
    return insertReferrerMessage(tx, {
      practiceId: actor.practiceId,
      caseId: c.id,
      kind: 'upload_link',
      subjectId: link.id,
      referrerId: referrer.id,
      toAddress: referrer.email,
      requestedBy: actor.userId,
    });
  });
  await audit(em, actor, {
    action: 'referrer.link_sent',
    entityType: 'case',
    entityId: c.id,
    detail: { link: link.id, visit: visit.id, milestone: visit.milestone, days: input.days, message: row.id },
  });
  const queued = await queueReferrerMessage(actor.practiceId, row.id);
  return { linkId: link.id, expiresAt: link.expiresAt.toISOString(), to: referrer.email, queued };
}

/** The case's referrer with an e-mail address, or a 422 saying what is missing. */
export async function referrerWithAddress(em: EntityManager, practiceId: string, referrerId: string | null): Promise<{ id: string; name: string; email: string }> {
  if (!referrerId) throw new ServiceError('This case has no referring dentist: record the referrer on the case first.', 422, { referrer: ['No referrer on this case.'] }, 'validation');
  const r = await em.findOne(ReferrerSchema, { id: referrerId, practice: practiceId }, { fields: ['id', 'name', 'email', 'archivedAt'] });
  if (!r) throw new ServiceError('This case has no referring dentist: record the referrer on the case first.', 422, { referrer: ['No referrer on this case.'] }, 'validation');
  const email = r.email?.trim();
  if (!email) {
    throw new ServiceError(
      `${r.name} has no e-mail address yet: add it to the referrer, then send. Nothing was sent.`,
      422,
      { referrer: [`${r.name} has no e-mail address.`] },
      'validation',
    );
  }
  return { id: r.id, name: r.name, email };
}

// --- the public side -------------------------------------------------------------------------------

/** What the public page and its JSON show: nothing of the patient beyond initials and tooth. */
export interface PublicLinkView {
  state: LinkState;
  /** Set when the link can no longer be used. */
  message: string | null;
  patientInitials: string;
  tooth: number;
  expiresAt: string;
  practiceName: string;
  maxFiles: number;
  maxBytes: number;
}

interface LinkRow {
  id: string;
  practice_id: string;
  case_id: string;
  visit_id: string;
  used_at: Date | null;
  expires_at: Date;
  tooth: number;
  given_name: string;
  family_name: string;
  practice_name: string;
}

async function findLink(em: EntityManager, token: string): Promise<LinkRow> {
  if (!isWellFormedToken(token)) throw new NotFoundError('This upload link is not valid. Check that the whole link was copied, or ask the practice for a new one.');
  const row = (await knexOf(em)('referrer_upload_link as l')
    .join('treatment_case as c', 'c.id', 'l.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .join('practice as pr', 'pr.id', 'l.practice_id')
    .where('l.token_hash', tokenHash(token))
    .first('l.id', 'l.practice_id', 'l.case_id', 'l.visit_id', 'l.used_at', 'l.expires_at', 'c.tooth', 'p.given_name', 'p.family_name', 'pr.name as practice_name')) as
    | LinkRow
    | undefined;
  if (!row) throw new NotFoundError('This upload link is not valid. Check that the whole link was copied, or ask the practice for a new one.');
  return row;
}

function publicView(row: LinkRow, now: Date): PublicLinkView {
  const state = linkState({ usedAt: row.used_at ? new Date(row.used_at) : null, expiresAt: new Date(row.expires_at) }, now);
  return {
    state,
    message: state === 'open' ? null : GONE_MESSAGES[state],
    patientInitials: initialsOf(row.given_name, row.family_name),
    tooth: row.tooth,
    expiresAt: new Date(row.expires_at).toISOString(),
    practiceName: row.practice_name,
    maxFiles: UPLOAD_MAX_FILES,
    maxBytes: filmMaxBytes(),
  };
}

function publicAudit(em: EntityManager, row: LinkRow, origin: Origin, action: string, detail: Record<string, unknown>) {
  return audit(em, null, { action, entityType: 'case', entityId: row.case_id, detail: { link: row.id, ...detail } }, {
    practiceId: row.practice_id,
    ip: origin.ip,
    userAgent: origin.userAgent,
  });
}

/** The public page's view of a link (opening it changes nothing; the view is audited). */
export async function openUploadLink(em: EntityManager, token: string, origin: Origin, now = new Date()): Promise<PublicLinkView> {
  const row = await findLink(em, token);
  const v = publicView(row, now);
  await publicAudit(em, row, origin, 'referrer.link_opened', { state: v.state });
  return v;
}

export class LinkGoneError extends ServiceError {
  constructor(message: string) {
    super(message, 410, undefined, 'gone');
  }
}

export interface ReceivedUpload {
  received: number;
  message: string;
}

/**
 * One upload through a link: every file checked (by content, size, metadata stripped), stored,
 * then the link consumed and the films written in one transaction. See the top of this file.
 */
export async function receiveReferrerUpload(em: EntityManager, token: string, files: Uint8Array[], origin: Origin, now = new Date()): Promise<ReceivedUpload> {
  const row = await findLink(em, token);
  const before = publicView(row, now);
  if (before.state !== 'open') {
    await publicAudit(em, row, origin, 'referrer.upload_refused', { reason: before.state });
    throw new LinkGoneError(before.message!);
  }
  if (files.length === 0) throw new ValidationError('Some fields need attention.', { files: ['Choose at least one film (PNG, JPEG or DICOM).'] });
  if (files.length > UPLOAD_MAX_FILES) throw new ValidationError('Some fields need attention.', { files: [`At most ${UPLOAD_MAX_FILES} files in one upload.`] });

  const checked: ProcessedFilm[] = [];
  for (const [i, bytes] of files.entries()) {
    try {
      const p = await checkFilm(bytes);
      if (!checked.some((c) => c.sha256 === p.sha256)) checked.push(p);
    } catch (e) {
      if (e instanceof ServiceError) {
        const which = files.length > 1 ? `File ${i + 1}: ` : '';
        throw new ServiceError(`${which}${e.message} Nothing was kept; the link still works.`, e.status, { files: [`${which}${e.message}`] }, e.code);
      }
      throw e;
    }
  }
  const live = await em.find(FilmSchema, { case: row.case_id, role: 'follow_up', sha256: { $in: checked.map((c) => c.sha256) }, archivedAt: null }, { fields: ['sha256'] });
  const fresh = checked.filter((c) => !live.some((f) => f.sha256 === c.sha256));

  const patient = await em.findOneOrFail(PatientSchema, { id: (await knexOf(em)('treatment_case').where({ id: row.case_id }).first('patient_id')).patient_id }, {
    fields: ['id', 'givenName', 'familyName', 'registryNumber'],
  });
  const stored: { s: StoredFilmObjects; p: ProcessedFilm }[] = [];
  try {
    for (const p of fresh) stored.push({ s: await storeFilmObjects(row.practice_id, row.case_id, p), p });
  } catch (e) {
    await removeQuietly(stored.flatMap((x) => Object.values(x.s.keys)));
    // the store is down: the link was not used (it is taken only with the films' rows, below)
    if (e instanceof UnavailableError) throw new UnavailableError(`${e.message} The link still works.`);
    throw e;
  }
  const keys = stored.flatMap((x) => Object.values(x.s.keys));

  let consumed = false;
  try {
    consumed = await em.transactional(async (tx) => {
      const claimed = (await knexOf(tx)('referrer_upload_link')
        .where({ id: row.id })
        .whereNull('used_at')
        .where('expires_at', '>', now)
        .update({ used_at: now, film_count: checked.length })
        .returning(['id'])) as { id: string }[];
      if (!claimed.length) return false;
      for (const x of stored) {
        tx.persist(
          tx.create(FilmSchema, {
            ...filmRowData(x.s, x.p, patient),
            practice: row.practice_id,
            case: row.case_id,
            visit: row.visit_id,
            role: 'follow_up',
            source: 'referrer',
            referrerLink: row.id,
            uploadedBy: null,
          }),
        );
      }
      await tx.flush();
      return true;
    });
  } catch (e) {
    await removeQuietly(keys);
    em.clear();
    if (e instanceof UniqueConstraintViolationException) {
      throw new ServiceError('The same film arrived at the practice at the same moment. Nothing was kept from this upload; the link still works.', 409, undefined, 'conflict');
    }
    throw e;
  }
  if (!consumed) {
    await removeQuietly(keys);
    const after = publicView(await findLink(em, token), new Date());
    await publicAudit(em, row, origin, 'referrer.upload_refused', { reason: after.state === 'open' ? 'used' : after.state });
    throw new LinkGoneError(after.state === 'expired' ? GONE_MESSAGES.expired : GONE_MESSAGES.used);
  }
  await publicAudit(em, row, origin, 'referrer.upload_received', {
    films: stored.map((x) => x.s.filmId),
    files: files.length,
    alreadyOnFile: checked.length - fresh.length,
  });
  const n = checked.length;
  return { received: n, message: `Thank you: ${n === 1 ? 'the film was' : `${n} films were`} received by the practice. This link is now used up.` };
}

// --- rate limit ----------------------------------------------------------------------------------

/** Requests to the public upload API per client address: 60 in 10 minutes (common practice; Lamina's own numbers). */
export const UPLOAD_RATE = { points: 60, durationSeconds: 600 } as const;
const limiters = new WeakMap<Redis, RateLimiterRedis>();

/** Takes one request for the address; 429 with Retry-After when its budget is spent, 503 when Redis cannot count. */
export async function takeUploadRequest(connect: () => Promise<Redis>, ip: string | null): Promise<void> {
  const unavailable = () => new ServiceError('The practice’s system is busy. Nothing was kept; try again in a minute.', 503, undefined, 'unavailable');
  const r = await connect().catch(() => {
    throw unavailable();
  });
  let limiter = limiters.get(r);
  if (!limiter) {
    limiter = new RateLimiterRedis({ storeClient: r, keyPrefix: 'lamina:referrer-upload', points: UPLOAD_RATE.points, duration: UPLOAD_RATE.durationSeconds });
    limiters.set(r, limiter);
  }
  try {
    await limiter.consume(ip ?? 'unknown', 1);
  } catch (e) {
    if (e instanceof RateLimiterRes) {
      const wait = Math.max(1, Math.ceil(e.msBeforeNext / 1000));
      throw new RateLimitedError(`Too many requests from your network. Try again in ${wait} seconds.`, wait);
    }
    throw unavailable();
  }
}
