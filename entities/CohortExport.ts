import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { COHORT_EXPORT_STATUSES } from '../lib/registry/cohort-status';
import { CohortVersionSchema } from './CohortVersion';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/**
 * One export of a saved cohort version (issue 14), made by the `cohort-export` job: its status
 * (queued → running → done | failed | cancelled), progress (rows handled over both passes of the
 * writer), the archive's figures and its object key (deterministic per export, so a retried job
 * replaces the object instead of adding one). The HMAC secret of its pseudonyms is never stored.
 */
export const CohortExportSchema = defineEntity({
  name: 'CohortExport',
  tableName: 'cohort_export',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    version: p.manyToOne(CohortVersionSchema).ref().deleteRule('cascade'),
    requestedBy: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    status: p.enum([...COHORT_EXPORT_STATUSES]).default('queued'),
    progressDone: p.integer().default(0),
    progressTotal: p.integer().default(0),
    cases: p.integer().nullable().default(null),
    patients: p.integer().nullable().default(null),
    reviews: p.integer().nullable().default(null),
    generalised: p.integer().nullable().default(null),
    suppressed: p.integer().nullable().default(null),
    minL: p.integer().nullable().default(null),
    files: p.json<string[]>().nullable().default(null),
    objectKey: p.string().length(200),
    byteSize: p.bigint('number').nullable().default(null),
    error: p.string().length(500).nullable().default(null),
    attempts: p.integer().default(0),
    createdAt: p.datetime().onCreate(() => new Date()),
    startedAt: p.datetime().nullable().default(null),
    finishedAt: p.datetime().nullable().default(null),
    cancelRequestedAt: p.datetime().nullable().default(null),
    notifiedAt: p.datetime().nullable().default(null),
  },
  indexes: [{ name: 'cohort_export_version_index', properties: ['version', 'createdAt'] }],
});

export type CohortExport = InferEntity<typeof CohortExportSchema>;
