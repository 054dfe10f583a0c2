import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { AuditEventSchema, type AuditEvent } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { assertCan } from '@/lib/auth/actor';

export interface AuditInput {
  action: string;
  entityType?: string;
  entityId?: string;
  detail?: Record<string, unknown>;
}

/** Records who did or saw what. Flushes at once so the trail is written even if the caller fails later. */
export async function audit(em: EntityManager, actor: Actor | null, input: AuditInput, extra?: Partial<AuditEvent>) {
  const event = em.create(AuditEventSchema, {
    practiceId: actor?.practiceId ?? null,
    actorId: actor?.userId ?? null,
    actorEmail: actor?.email ?? null,
    action: input.action,
    entityType: input.entityType ?? null,
    entityId: input.entityId ?? null,
    detail: input.detail ?? null,
    ip: actor?.ip ?? null,
    userAgent: actor?.userAgent?.slice(0, 300) ?? null,
    ...extra,
  } as AuditEvent);
  await em.persist(event).flush();
  return event;
}

export interface AuditPage {
  rows: {
    id: string;
    at: string;
    actorEmail: string | null;
    action: string;
    entityType: string | null;
    entityId: string | null;
    ip: string | null;
    detail: Record<string, unknown> | null;
  }[];
  total: number;
  page: number;
  pageSize: number;
}

/** The practice's audit trail, newest first. Reading it is itself audited. */
export async function listAuditEvents(
  em: EntityManager,
  actor: Actor,
  q: { page: number; pageSize: number; action?: string },
): Promise<AuditPage> {
  assertCan(actor, 'audit.read');
  const where = { practiceId: actor.practiceId, ...(q.action ? { action: { $like: `${q.action}%` } } : {}) };
  const [rows, total] = await em.findAndCount(AuditEventSchema, where, {
    orderBy: { at: 'desc', id: 'desc' },
    limit: q.pageSize,
    offset: (q.page - 1) * q.pageSize,
  });
  await audit(em, actor, { action: 'audit.read', detail: { page: q.page, action: q.action ?? null } });
  return {
    rows: rows.map((r) => ({
      id: r.id,
      at: r.at.toISOString(),
      actorEmail: r.actorEmail ?? null,
      action: r.action,
      entityType: r.entityType ?? null,
      entityId: r.entityId ?? null,
      ip: r.ip ?? null,
      detail: r.detail ?? null,
    })),
    total,
    page: q.page,
    pageSize: q.pageSize,
  };
}
