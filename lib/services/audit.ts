import 'server-only';
import { randomUUID } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import { AuditEventSchema, type AuditEvent } from '@/entities';
import type { Knex } from '@mikro-orm/knex';
import type { Actor } from '@/lib/auth/actor';
import { assertCan } from '@/lib/auth/actor';
import { can } from '@/lib/auth/permissions';
import { actionWords, detailWords, recordKindWords, shortRef } from '@/lib/audit/words';
import { writeCsv } from '@/lib/csv/write';
import { AuditFilter, AuditQuery } from '@/lib/schemas/audit';
import { parseInput } from './parse';
import { displayName, knexOf, practiceSettings } from './registry-common';

export interface AuditInput {
  action: string;
  entityType?: string;
  entityId?: string;
  detail?: Record<string, unknown>;
}

/** What an event records of the actor and the input (one home for both writers below). */
function eventFields(actor: Actor | null, input: AuditInput) {
  return {
    practiceId: actor?.practiceId ?? null,
    actorId: actor?.userId ?? null,
    actorEmail: actor?.email ?? null,
    action: input.action,
    entityType: input.entityType ?? null,
    entityId: input.entityId ?? null,
    detail: input.detail ?? null,
    ip: actor?.ip ?? null,
    userAgent: actor?.userAgent?.slice(0, 300) ?? null,
  };
}

/** Records who did or saw what. Flushes at once so the trail is written even if the caller fails later. */
export async function audit(em: EntityManager, actor: Actor | null, input: AuditInput, extra?: Partial<AuditEvent>) {
  const event = em.create(AuditEventSchema, { ...eventFields(actor, input), ...extra } as AuditEvent);
  await em.persist(event).flush();
  return event;
}

/** An audit_event row as the table holds it (auditRead and a review's save write it without the ORM: auditEventRow). */
interface AuditEventRow {
  id: string;
  at: Date;
  practice_id: string | null;
  actor_id: string | null;
  actor_email: string | null;
  action: string;
  entity_type: string | null;
  entity_id: string | null;
  ip: string | null;
  user_agent: string | null;
  /** jsonb, sent as its JSON text */
  detail: string | null;
}

/**
 * Records who saw what, for a read: the same row as `audit`, written by one plain insert (in the
 * request's transaction, if any) without the unit of work, which a read has nothing to flush in
 * but would still compare every entity it loaded, nor the ORM's insert, which costs the web server
 * more than the statement (issue 15, load). Writes use `audit`, so their event is flushed with
 * their changes (a review's save writes its events in its own statement: auditEventRow).
 */
export async function auditRead(em: EntityManager, actor: Actor, input: AuditInput): Promise<void> {
  await knexOf(em)('audit_event').insert(auditEventRow(actor, input));
}

/** An event's row for a plain insert: a read's (auditRead), or a save's written in the same statement as its rows (reviews.ts). */
export function auditEventRow(actor: Actor, input: AuditInput): AuditEventRow {
  const f = eventFields(actor, input);
  return {
    id: randomUUID(),
    at: new Date(),
    practice_id: f.practiceId,
    actor_id: f.actorId,
    actor_email: f.actorEmail,
    action: f.action,
    entity_type: f.entityType,
    entity_id: f.entityId,
    ip: f.ip,
    user_agent: f.userAgent,
    detail: f.detail === null ? null : JSON.stringify(f.detail),
  };
}

/** One event as the audit trail shows it: plain words, the person and the record named. */
export interface AuditRow {
  id: string;
  at: string;
  /** The person's name (or e-mail when they have none); null when Lamina acted on its own. */
  who: string | null;
  whoEmail: string | null;
  action: string;
  what: string;
  /** The record the event names: its kind in words and a short reference (the start of its id). */
  record: { kind: string; kindWords: string; id: string; ref: string; name: string | null; href: string | null } | null;
  detail: string;
  ip: string | null;
}

export interface AuditPage {
  rows: AuditRow[];
  total: number;
  page: number;
  pageSize: number;
}

export interface AuditPerson {
  value: string;
  label: string;
}

/** The most rows one CSV export holds; narrow the filters for more. */
export const AUDIT_EXPORT_LIMIT = 50_000;

/** An event as the trail reads it (the columns it shows; the detail parsed). */
type EventRow = Pick<AuditEventRow, 'id' | 'at' | 'actor_id' | 'actor_email' | 'action' | 'entity_type' | 'entity_id' | 'ip'> & { detail: Record<string, unknown> | null };

/** The events of the actor's practice that match the filters (days are the practice's calendar days). */
function filtered(knex: Knex, practiceId: string, timeZone: string, f: AuditFilter): Knex.QueryBuilder {
  const q = knex('audit_event as e').where('e.practice_id', practiceId);
  if (f.person === 'system') q.whereNull('e.actor_id');
  else if (f.person) q.where('e.actor_id', f.person);
  if (f.action) {
    if (f.action.endsWith('.')) q.where('e.action', 'like', `${f.action}%`);
    else q.where('e.action', f.action);
  }
  if (f.record) q.where('e.entity_type', f.record);
  if (f.ref) {
    // The record itself, or an event whose detail names it (a queue read lists its visits).
    const ref = f.ref;
    q.where((w) => w.where('e.entity_id', 'like', `${ref}%`).orWhereRaw('e.detail::text like ?', [`%"${ref}%`]));
  }
  if (f.from) q.whereRaw('(e.at at time zone ?)::date >= ?::date', [timeZone, f.from]);
  if (f.to) q.whereRaw('(e.at at time zone ?)::date <= ?::date', [timeZone, f.to]);
  return q;
}

/**
 * Names for the page's people and records. People are named to everyone who reads the trail.
 * Patients are named only to a reader who may read patient data (patient.read): the administrator
 * alone does not, and sees the record's kind and short reference instead of a name.
 */
async function namesFor(em: EntityManager, actor: Actor, rows: EventRow[]) {
  const knex = knexOf(em);
  const userIds = [...new Set(rows.flatMap((r) => [r.actor_id, r.entity_type === 'user' ? r.entity_id : null]).filter((x): x is string => Boolean(x)))];
  const users = userIds.length
    ? ((await knex('app_user as u')
        .join('membership as m', 'm.user_id', 'u.id')
        .where('m.practice_id', actor.practiceId)
        .whereIn('u.id', userIds)
        .distinct('u.id', 'u.name', 'u.email')) as { id: string; name: string | null; email: string }[])
    : [];
  const people = new Map(users.map((u) => [u.id, u.name || u.email]));

  const patients = new Map<string, { id: string; name: string }>(); // record id → its patient
  const seesPatients = can(actor.roles, 'patient.read');
  if (seesPatients) {
    const ids = (kind: string) => rows.filter((r) => r.entity_type === kind && r.entity_id).map((r) => r.entity_id!);
    const named = (await knex
      .select('x.id as record_id', 'p.id', 'p.given_name', 'p.family_name')
      .from(
        knex
          .select('id', 'id as patient_id')
          .from('patient')
          .whereIn('id', ids('patient'))
          .unionAll((u) => u.select('id', 'patient_id').from('treatment_case').whereIn('id', ids('case')))
          .unionAll((u) => u.select('v.id', 'c.patient_id').from('recall_visit as v').join('treatment_case as c', 'c.id', 'v.case_id').whereIn('v.id', ids('visit')))
          .as('x'),
      )
      .join('patient as p', 'p.id', 'x.patient_id')
      .where('p.practice_id', actor.practiceId)) as { record_id: string; id: string; given_name: string; family_name: string }[];
    for (const n of named) patients.set(n.record_id, { id: n.id, name: displayName({ givenName: n.given_name, familyName: n.family_name }) });
  }
  return { people, patients, seesPatients };
}

function toRow(r: EventRow, names: Awaited<ReturnType<typeof namesFor>>): AuditRow {
  let record: AuditRow['record'] = null;
  if (r.entity_type && r.entity_id) {
    const patient = names.patients.get(r.entity_id);
    const name = r.entity_type === 'user' ? (names.people.get(r.entity_id) ?? null) : (patient?.name ?? null);
    const href =
      !names.seesPatients ? null
      : r.entity_type === 'case' ? `/cases/${r.entity_id}`
      : r.entity_type === 'patient' ? `/patients/${r.entity_id}`
      : r.entity_type === 'visit' && patient ? `/patients/${patient.id}`
      : null;
    record = { kind: r.entity_type, kindWords: recordKindWords(r.entity_type), id: r.entity_id, ref: shortRef(r.entity_id), name, href };
  }
  return {
    id: r.id,
    at: new Date(r.at).toISOString(),
    who: r.actor_id ? (names.people.get(r.actor_id) ?? r.actor_email) : r.actor_email,
    whoEmail: r.actor_email,
    action: r.action,
    what: actionWords(r.action),
    record,
    detail: detailWords(r.detail),
    ip: r.ip,
  };
}

async function readEvents(em: EntityManager, actor: Actor, f: AuditFilter, limit: number, offset: number) {
  const { timeZone } = await practiceSettings(em, actor.practiceId);
  const knex = knexOf(em);
  const [rows, [{ n }]] = await Promise.all([
    filtered(knex, actor.practiceId, timeZone, f)
      .select('e.id', 'e.at', 'e.actor_id', 'e.actor_email', 'e.action', 'e.entity_type', 'e.entity_id', 'e.ip', 'e.detail')
      .orderBy([{ column: 'e.at', order: 'desc' }, { column: 'e.id', order: 'desc' }])
      .limit(limit)
      .offset(offset) as Promise<EventRow[]>,
    filtered(knex, actor.practiceId, timeZone, f).count({ n: '*' }) as Promise<{ n: string | number }[]>,
  ]);
  const names = await namesFor(em, actor, rows);
  return { rows: rows.map((r) => toRow(r, names)), total: Number(n), namedPatients: names.patients.size > 0 };
}

/** The filters as stored in the audit event that records a read of the trail. */
function filterDetail(f: AuditFilter) {
  return Object.fromEntries(Object.entries(f).filter(([k, v]) => v !== undefined && k !== 'page' && k !== 'pageSize'));
}

/** The practice's audit trail, newest first, filtered and paged. Reading it is itself audited. */
export async function listAuditEvents(em: EntityManager, actor: Actor, raw: unknown): Promise<AuditPage> {
  assertCan(actor, 'audit.read');
  const q = parseInput(AuditQuery, raw);
  const { rows, total, namedPatients } = await readEvents(em, actor, q, q.pageSize, (q.page - 1) * q.pageSize);
  await audit(em, actor, { action: 'audit.read', detail: { page: q.page, ...filterDetail(q), ...(namedPatients ? { patientsNamed: true } : {}) } });
  return { rows, total, page: q.page, pageSize: q.pageSize };
}

/** Everyone who appears in the practice's trail (members and former members), for the person filter. */
export async function auditPeople(em: EntityManager, actor: Actor): Promise<AuditPerson[]> {
  assertCan(actor, 'audit.read');
  const users = (await knexOf(em)('app_user as u')
    .join('membership as m', 'm.user_id', 'u.id')
    .where('m.practice_id', actor.practiceId)
    .distinct('u.id', 'u.name', 'u.email')) as { id: string; name: string | null; email: string }[];
  const people = users
    .map((u) => ({ value: u.id, label: u.name ? `${u.name} (${u.email})` : u.email }))
    .sort((a, b) => a.label.localeCompare(b.label));
  return [...people, { value: 'system', label: 'Lamina itself and patients’ links' }];
}

export const AUDIT_CSV_HEADER = ['When (UTC)', 'Who', 'E-mail', 'What', 'Action code', 'Record', 'Record id', 'Patient', 'Detail', 'From'] as const;

/** The filtered trail as CSV (newest first, at most AUDIT_EXPORT_LIMIT rows), formula-safe. The export is audited. */
export async function exportAuditCsv(em: EntityManager, actor: Actor, raw: unknown): Promise<{ csv: string; rows: number; truncated: boolean }> {
  assertCan(actor, 'audit.read');
  const f = parseInput(AuditFilter, raw);
  const { rows, total, namedPatients } = await readEvents(em, actor, f, AUDIT_EXPORT_LIMIT, 0);
  const csv = writeCsv(
    AUDIT_CSV_HEADER,
    rows.map((r) => [
      r.at,
      r.who ?? 'Lamina',
      r.whoEmail,
      r.what,
      r.action,
      r.record ? r.record.kindWords : '',
      r.record?.id ?? '',
      r.record && r.record.kind !== 'user' ? (r.record.name ?? '') : '',
      r.detail,
      r.ip,
    ]),
  );
  await audit(em, actor, { action: 'audit.exported', detail: { rows: rows.length, ...filterDetail(f), ...(namedPatients ? { patientsNamed: true } : {}) } });
  return { csv, rows: rows.length, truncated: total > rows.length };
}
