import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';

/**
 * Who did or saw what, to which record, when and from where. Append-only.
 * Actor and practice are plain ids (not foreign keys) so the trail outlives the rows it names.
 */
export const AuditEventSchema = defineEntity({
  name: 'AuditEvent',
  tableName: 'audit_event',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    at: p.datetime().onCreate(() => new Date()).index(),
    practiceId: p.uuid().nullable().index(),
    actorId: p.uuid().nullable(),
    /** The e-mail as typed, for failed sign-ins where no user is known. */
    actorEmail: p.string().length(254).nullable(),
    /** Dotted verb, e.g. "auth.sign_in", "team.role_granted", "patient.read". */
    action: p.string().length(80).index(),
    entityType: p.string().length(60).nullable(),
    entityId: p.string().length(80).nullable(),
    ip: p.string().length(64).nullable(),
    userAgent: p.string().length(300).nullable(),
    detail: p.json<Record<string, unknown>>().nullable(),
  },
});

export type AuditEvent = InferEntity<typeof AuditEventSchema>;
