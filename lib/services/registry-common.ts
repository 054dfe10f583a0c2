import 'server-only';
import { z } from 'zod';
import type { Knex } from '@mikro-orm/knex';
import type { EntityManager } from '@mikro-orm/postgresql';
import { PracticeSchema, TreatmentCaseSchema, type TreatmentCase } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { DEFAULT_RECALL_POLICY, RecallPolicySchema, type RecallPolicy } from '@/lib/schemas/recall-policy';
import type { Canal } from '@/lib/schemas/case';
import { fillLengthClass, type FillLengthClass } from '@/lib/scoring';
import type { ToothNotation } from '@/lib/teeth';
import { isUuid } from '@/lib/uuid';
import type { CalendarDate } from '@/lib/registry/calendar-date';
import { blankAsUndefined, calendarDate, text } from '@/lib/registry/fields';
import { NotFoundError, ValidationError } from './errors';

/**
 * Small pieces shared by the registry services (patients, referrers, cases, visits, reviews,
 * import): the practice's settings, "today" on the practice's calendar, id checks that answer
 * 404, the clinician check and the case's fill-length class.
 */

export interface Page<T> {
  rows: T[];
  total: number;
  page: number;
  pageSize: number;
}

export interface PracticeSettings {
  id: string;
  toothNotation: ToothNotation;
  timeZone: string;
  recallPolicy: RecallPolicy;
  /** Days before which an unchanged lesion is "uncertain" (lib/scoring assessReview). */
  minObservationDays: number;
}

/** The acting practice as the session's read brings it: its settings, name and stored reminder policy. */
export interface SessionPractice {
  settings: PracticeSettings;
  name: string;
  reminderPolicy: unknown;
}

/** What the request's session read came with, per request EntityManager (readWithSession). */
const readWithTheSession = new WeakMap<EntityManager, SessionPractice>();

/**
 * The acting practice as the session's read on every request loaded it with the user
 * (lib/services/auth.ts resolveSession): practiceSettings and recallSettings on the request's
 * EntityManager then need no query of their own. `null` forgets it (a change of the practice's
 * settings or reminder policy in this request).
 */
export function readWithSession(em: EntityManager, practice: SessionPractice | null): void {
  if (practice) readWithTheSession.set(em, practice);
  else readWithTheSession.delete(em);
}

/** The practice read with the request's session, when `em` is the request's and it is that practice. */
export function practiceOfSession(em: EntityManager, practiceId: string): SessionPractice | undefined {
  const known = readWithTheSession.get(em);
  return known?.settings.id === practiceId ? known : undefined;
}

/** The settings from the practice's columns (one home for both reads). */
export function settingsOf(row: { id: string; toothNotation: string; timeZone: string; recallPolicy: unknown; minObservationDays: number }): PracticeSettings {
  return {
    id: row.id,
    toothNotation: row.toothNotation as ToothNotation,
    timeZone: row.timeZone,
    recallPolicy: recallPolicyOf(row.recallPolicy),
    minObservationDays: row.minObservationDays,
  };
}

/** The practice's notation, time zone and recall policy (a stored policy that no longer parses falls back to the default). */
export async function practiceSettings(em: EntityManager, practiceId: string): Promise<PracticeSettings> {
  const known = practiceOfSession(em, practiceId);
  if (known) return known.settings;
  return settingsOf(
    await em.findOneOrFail(PracticeSchema, practiceId, {
      fields: ['id', 'toothNotation', 'timeZone', 'recallPolicy', 'minObservationDays'],
    }),
  );
}

/** A practice's stored recall policy, parsed; one that no longer parses falls back to the default. */
export function recallPolicyOf(stored: unknown): RecallPolicy {
  const parsed = RecallPolicySchema.safeParse(stored);
  return parsed.success ? parsed.data : DEFAULT_RECALL_POLICY;
}

/** The knex of the caller's transaction when there is one, else of the EntityManager. */
export function knexOf(em: EntityManager): Knex {
  return (em.getTransactionContext<Knex.Transaction>() ?? em.getKnex()) as Knex;
}

/**
 * A save's own rows (`insert`: one plain statement, e.g. a review and its audit events) written
 * together with whatever else the request changed on its entities, atomically and in as few round
 * trips as that allows:
 * - the unit of work has nothing to write: the one statement alone (a statement is atomic; no
 *   BEGIN, no COMMIT);
 * - it has (a visit moved, a correction's marking): the statement, then the flush, in one
 *   transaction — the rows first, as the changes may name them;
 * - the request is inside a transaction already: the statement and the flush in it.
 * The transaction is the driver's (lib/db-driver.ts), so a connection lost on the way is answered
 * as one (503), not as the rollback's refusal.
 */
export async function insertWithChanges(em: EntityManager, insert: (knex: Knex) => Knex.QueryBuilder): Promise<void> {
  // knexOf: the request's transaction when there is one
  const rowsThenChanges = async () => {
    await insert(knexOf(em));
    await em.flush();
  };
  if (em.isInTransaction()) return rowsThenChanges();
  const uow = em.getUnitOfWork();
  uow.computeChangeSets();
  if (uow.getChangeSets().length === 0 && uow.getCollectionUpdates().length === 0) {
    await insert(knexOf(em));
    return;
  }
  await em.getConnection('write').transactional(async (trx) => {
    em.setTransactionContext(trx);
    try {
      await rowsThenChanges();
    } finally {
      em.resetTransactionContext();
    }
  });
}

/** A timestamptz as a plain read gives it: the ORM's connection reads it as text (new Date() takes either). */
export type Timestamp = string | Date;

const dayFormats = new Map<string, Intl.DateTimeFormat>();

/**
 * The calendar date of `now` in `timeZone` (the practice's), 'YYYY-MM-DD'; an unknown zone
 * counts as UTC. The formatter is kept per zone (building one costs more than a send's SQL).
 */
export function todayIn(timeZone: string, now: Date = new Date()): CalendarDate {
  let f = dayFormats.get(timeZone);
  if (!f) {
    try {
      f = new Intl.DateTimeFormat('en-GB', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' });
    } catch {
      f = new Intl.DateTimeFormat('en-GB', { timeZone: 'UTC', year: 'numeric', month: '2-digit', day: '2-digit' });
    }
    dayFormats.set(timeZone, f);
  }
  const parts = f.formatToParts(now);
  const get = (type: string) => parts.find((p) => p.type === type)!.value;
  return `${get('year')}-${get('month')}-${get('day')}`;
}


/** An id that is no uuid names no record: answer 404 like an unknown one (never a database error). */
export function assertId(id: unknown, what: string): string {
  if (!isUuid(id)) throw new NotFoundError(`No such ${what}.`);
  return id.toLowerCase();
}

/** What a step gave or threw, like a settled promise: for steps run side by side whose failures are judged in a chosen order (`settled`). */
export function attempt<T>(fn: () => T): PromiseSettledResult<T> {
  try {
    return { status: 'fulfilled', value: fn() };
  } catch (reason) {
    return { status: 'rejected', reason };
  }
}

/** A settled step's value, or its error thrown. */
export function settled<T>(r: PromiseSettledResult<T>): T {
  if (r.status === 'rejected') throw r.reason;
  return r.value;
}

/** A referenced id from a body (patientId, operatorId…): not a uuid is a 422 on that field. */
export function bodyId(value: string | undefined, field: string, message: string): string | undefined {
  if (value === undefined) return undefined;
  if (!isUuid(value)) throw new ValidationError('Some fields need attention.', { [field]: [message] });
  return value.toLowerCase();
}

/** The users among `userIds` who hold an active clinician role in the practice, with their names. */
export async function activeClinicians(em: EntityManager, practiceId: string, userIds: readonly string[]): Promise<Map<string, string | null>> {
  if (userIds.length === 0) return new Map();
  const rows = (await knexOf(em)('membership as m')
    .join('app_user as u', 'u.id', 'm.user_id')
    .where({ 'm.practice_id': practiceId, 'm.role': 'clinician' })
    .whereNull('m.revoked_at')
    .whereIn('m.user_id', [...new Set(userIds)])
    .select('u.id', 'u.name')) as { id: string; name: string | null }[];
  return new Map(rows.map((r) => [r.id, r.name ?? null]));
}

/** Throws a 422 on `field` unless the user is an active clinician of the practice; else their name (null when they have none). */
export async function assertClinician(em: EntityManager, practiceId: string, userId: string, field: string): Promise<string | null> {
  const id = bodyId(userId, field, 'Choose a clinician of this practice.')!;
  const found = await activeClinicians(em, practiceId, [id]);
  if (!found.has(id)) throw new ValidationError('Some fields need attention.', { [field]: ['Choose a clinician of this practice.'] });
  return found.get(id) ?? null;
}

const FILL_RANK: Record<FillLengthClass, number> = { within: 0, short: 1, beyond: 2 };

/**
 * The case's fill-length class from its canals (lib/scoring per canal): the worst of them —
 * beyond if any canal is beyond the apex, else short if any is more than 2 mm short, else
 * within. null while no canal has a measured fill length.
 */
export function caseFillLengthClass(canals: readonly Pick<Canal, 'fillToApexMm'>[] | undefined): FillLengthClass | null {
  let worst: FillLengthClass | null = null;
  for (const c of canals ?? []) {
    if (c.fillToApexMm === undefined || c.fillToApexMm === null) continue;
    const cls = fillLengthClass(c.fillToApexMm);
    if (worst === null || FILL_RANK[cls] > FILL_RANK[worst]) worst = cls;
  }
  return worst;
}

/** "Family, Given" for lists; sorting is by family then given name. */
export function displayName(p: { givenName: string; familyName: string }): string {
  return `${p.familyName}, ${p.givenName}`;
}

/** Escapes LIKE wildcards in a user's search word. */
export function likeWord(word: string): string {
  return `%${word.toLowerCase().replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
}

/** Up to five search words from a query string (blank → none). */
export function searchWords(q: string | undefined): string[] {
  return (q ?? '')
    .trim()
    .split(/[\s,]+/)
    .filter(Boolean)
    .slice(0, 5);
}

/** A comma-separated list in a query string (`kind=a,b`), or repeated values, as an array. */
export function listParam<T extends z.ZodType>(item: T) {
  return z.preprocess((v) => {
    if (v === undefined || v === null || v === '') return undefined;
    const list = Array.isArray(v) ? v : String(v).split(',');
    const cleaned = list.map((s) => String(s).trim()).filter(Boolean);
    return cleaned.length ? cleaned : undefined;
  }, z.array(item).max(20, 'At most 20 values.').optional());
}

/** A query-string date bound 'YYYY-MM-DD' (blank = none). */
export const queryDate = (what: string) => blankAsUndefined(calendarDate(what));

export const ArchivedFilter = z.enum(['exclude', 'include', 'only'], { error: 'archived is exclude, include or only.' }).default('exclude');

/** Applies a list's archived filter to `column` (the row's archived_at). */
export function whereArchived(b: Knex.QueryBuilder, column: string, filter: z.output<typeof ArchivedFilter>): Knex.QueryBuilder {
  if (filter === 'exclude') b.whereNull(column);
  if (filter === 'only') b.whereNotNull(column);
  return b;
}

/** A list's free-text search (`q`). */
export const SearchText = text({ max: 100, tooLong: 'At most 100 characters in the search.' }).optional();

/** A list's sort direction (`dir`). */
export const SortDir = (byDefault: 'asc' | 'desc') => z.enum(['asc', 'desc'], { error: 'dir is asc or desc.' }).default(byDefault);

/** The rows a page skips. */
export function pageOffset(q: { page: number; pageSize: number }): number {
  return (q.page - 1) * q.pageSize;
}

/** The number of rows `query` finds. */
export async function countOf(query: Knex.QueryBuilder): Promise<number> {
  return Number(((await query.count('* as n')) as { n: string }[])[0]?.n ?? 0);
}

/**
 * One page of a set and the set's size from one read: the set (`id` and the sort columns) is read
 * once (a materialized CTE), then counted and sorted for the page — half the work of a count and a
 * page query side by side when both must read the whole set (a desk queue, the cases with visits due
 * in a range). A page past the end has no row to carry the total: `countApart` counts it (rare).
 */
export async function pageFromOneRead(
  knex: Knex,
  set: Knex.QueryBuilder,
  order: { column: string; order: 'asc' | 'desc'; nulls?: 'first' | 'last' }[],
  paging: { page: number; pageSize: number },
  countApart: () => Promise<number>,
): Promise<{ ids: string[]; total: number }> {
  const rows = (await knex
    .withMaterialized('one_read', set)
    .from('one_read')
    .select('id', knex.raw('(select count(*) from one_read) as total'))
    .orderBy(order)
    .limit(paging.pageSize)
    .offset(pageOffset(paging))) as { id: string; total: string }[];
  return { ids: rows.map((r) => r.id), total: rows.length ? Number(rows[0]!.total) : paging.page > 1 ? await countApart() : 0 };
}

/** Loads a case of the actor's practice or answers 404 (also for another practice's id). */
export async function findCase(em: EntityManager, actor: Actor, id: string): Promise<TreatmentCase> {
  const c = await em.findOne(TreatmentCaseSchema, { id: assertId(id, 'case'), practice: actor.practiceId });
  if (!c) throw new NotFoundError('No such case.');
  return c;
}

/**
 * The fields a request carried, from its parsed patch: a key the client left out keeps its
 * stored value; a field sent as '' (parsed to undefined) clears it.
 */
export function presentKeys(patch: Record<string, unknown>, raw: unknown, skip: readonly string[] = ['archived']): Record<string, unknown> {
  const sent = raw && typeof raw === 'object' ? new Set(Object.keys(raw)) : new Set<string>();
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(patch)) if (!skip.includes(k) && sent.has(k)) out[k] = v;
  return out;
}

/** Route params carrying a record id; a malformed id is answered 404 by the service (assertId). */
export const IdParams = z.object({ id: z.string({ error: 'Missing id.' }).trim().min(1, 'Missing id.').max(64, 'Unknown id.') });

/**
 * Inserts many rows of one entity in few statements: each chunk is sent as one JSON parameter
 * and expanded by PostgreSQL (`json_populate_recordset`), which is several times faster than a
 * multi-row VALUES list for wide rows. Rows use the entity's property names (relations as ids);
 * columns left out take their database defaults. No unit of work, no hooks: give ids and
 * timestamps. Runs in the caller's transaction when there is one.
 */
export async function bulkInsert(em: EntityManager, entity: { meta: { className: string } } | string, rows: readonly Record<string, unknown>[], chunk = 2000): Promise<void> {
  if (rows.length === 0) return;
  const meta = em.getMetadata().get(typeof entity === 'string' ? entity : entity.meta.className);
  const props = Object.keys(rows[0]!);
  const columns = props.map((p) => {
    const prop = meta.props.find((x) => x.name === p);
    if (!prop?.fieldNames?.length) throw new Error(`bulkInsert: ${meta.className} has no column for ${p}`);
    return prop.fieldNames[0]!;
  });
  const list = columns.map((c) => `"${c}"`).join(', ');
  const db = knexOf(em);
  for (let i = 0; i < rows.length; i += chunk) {
    const json = JSON.stringify(
      rows.slice(i, i + chunk).map((r) => Object.fromEntries(props.map((p, k) => [columns[k], r[p] instanceof Date ? (r[p] as Date).toISOString() : (r[p] ?? null)]))),
    );
    await db.raw(`insert into "${meta.tableName}" (${list}) select ${list} from json_populate_recordset(null::"${meta.tableName}", ?::json)`, [json]);
  }
}
