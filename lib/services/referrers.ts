import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { ReferrerSchema, type Referrer } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { Paging } from '@/lib/schemas/paging';
import { ReferrerCreateSchema, ReferrerUpdateSchema, type ReferrerCreate } from '@/lib/schemas/referrer';
import { audit } from './audit';
import { ConflictError, NotFoundError } from './errors';
import { parseInput } from './parse';
import { SearchText, assertId, likeWord, pageOffset, searchWords, type Page } from './registry-common';

export interface ReferrerView {
  id: string;
  name: string;
  practiceName: string | null;
  email: string | null;
  archived: boolean;
}

export const ReferrerListQuery = Paging.extend({
  q: SearchText,
});

/** The practice's referring dentists, by name; searched by name, practice or e-mail. Not patient data: not audited. */
export async function listReferrers(em: EntityManager, actor: Actor, raw: unknown): Promise<Page<ReferrerView>> {
  assertCan(actor, 'patient.read');
  const q = parseInput(ReferrerListQuery, raw);
  const knex = em.getKnex();
  const base = knex('referrer as r').where('r.practice_id', actor.practiceId).whereNull('r.archived_at');
  for (const w of searchWords(q.q)) {
    base.where((b) =>
      b
        .whereRaw('lower(r.name) like ?', [likeWord(w)])
        .orWhereRaw("lower(coalesce(r.practice_name, '')) like ?", [likeWord(w)])
        .orWhereRaw("lower(coalesce(r.email, '')) like ?", [likeWord(w)]),
    );
  }
  const [count, rows] = await Promise.all([
    base.clone().count<{ n: string }[]>('* as n'),
    base
      .clone()
      .select('r.id', 'r.name', 'r.practice_name', 'r.email', 'r.archived_at')
      .orderBy([{ column: 'r.name' }, { column: 'r.id' }])
      .limit(q.pageSize)
      .offset(pageOffset(q)),
  ]);
  return {
    rows: rows.map((r: Record<string, unknown>) => ({
      id: r.id as string,
      name: r.name as string,
      practiceName: (r.practice_name as string | null) ?? null,
      email: (r.email as string | null) ?? null,
      archived: r.archived_at !== null,
    })),
    total: Number(count[0]?.n ?? 0),
    page: q.page,
    pageSize: q.pageSize,
  };
}

/** Adds a referring dentist. The same e-mail twice in one practice is refused (409). */
export async function createReferrer(em: EntityManager, actor: Actor, raw: unknown): Promise<ReferrerView> {
  assertCan(actor, 'patient.write');
  const input = parseInput(ReferrerCreateSchema, raw);
  if (input.email) {
    const existing = await em.findOne(ReferrerSchema, { practice: actor.practiceId, email: input.email, archivedAt: null });
    if (existing) throw new ConflictError(`${existing.name} already has the e-mail ${input.email} in this practice.`);
  }
  const referrer = em.create(ReferrerSchema, {
    practice: actor.practiceId,
    name: input.name,
    practiceName: input.practiceName ?? null,
    email: input.email ?? null,
  }) as Referrer;
  await em.flush();
  await audit(em, actor, { action: 'referrer.created', entityType: 'referrer', entityId: referrer.id });
  return referrerView(referrer);
}

/**
 * Changes a referring dentist of the practice: name, practice, e-mail (e.g. the address an upload link
 * or an outcome letter needs), or archives them. Another practice's referrer is unknown (404); an
 * e-mail another referrer of the practice already has is refused (409). Audited with the fields changed.
 */
export async function updateReferrer(em: EntityManager, actor: Actor, id: string, raw: unknown): Promise<ReferrerView> {
  assertCan(actor, 'patient.write');
  const input = parseInput(ReferrerUpdateSchema, raw);
  const referrer = await em.findOne(ReferrerSchema, { id: assertId(id, 'referrer in this practice'), practice: actor.practiceId });
  if (!referrer) throw new NotFoundError('No such referrer in this practice.');
  if (input.email && input.email !== referrer.email) {
    const existing = await em.findOne(ReferrerSchema, { practice: actor.practiceId, email: input.email, archivedAt: null, id: { $ne: referrer.id } });
    if (existing) throw new ConflictError(`${existing.name} already has the e-mail ${input.email} in this practice.`);
  }
  const changed: string[] = [];
  const set = <K extends 'name' | 'practiceName' | 'email'>(key: K, value: Referrer[K] | undefined) => {
    if (value === undefined || value === referrer[key]) return;
    referrer[key] = value;
    changed.push(key);
  };
  set('name', input.name);
  set('practiceName', input.practiceName);
  set('email', input.email);
  if (input.archived !== undefined && input.archived !== Boolean(referrer.archivedAt)) {
    referrer.archivedAt = input.archived ? new Date() : null;
    changed.push('archived');
  }
  if (changed.length > 0) {
    await em.flush();
    await audit(em, actor, { action: 'referrer.updated', entityType: 'referrer', entityId: referrer.id, detail: { fields: changed } });
  }
  return referrerView(referrer);
}

export function referrerView(r: Pick<Referrer, 'id' | 'name' | 'practiceName' | 'email' | 'archivedAt'>): ReferrerView {
  return { id: r.id, name: r.name, practiceName: r.practiceName ?? null, email: r.email ?? null, archived: Boolean(r.archivedAt) };
}

/** The key the import matches referrers by: the e-mail when given, else name and practice (case-insensitive). */
export function referrerKey(r: Pick<ReferrerCreate, 'name' | 'practiceName' | 'email'> | { name: string; practiceName: string | null; email: string | null }): string {
  if (r.email) return `e:${r.email.toLowerCase()}`;
  return `n:${r.name.trim().toLowerCase()}|${(r.practiceName ?? '').trim().toLowerCase()}`;
}
