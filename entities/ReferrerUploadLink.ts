import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { ReferrerSchema } from './Referrer';
import { TreatmentCaseSchema } from './TreatmentCase';
import { UserSchema } from './User';

/**
 * A single-purpose upload link for one recall visit, e-mailed to the case's referring dentist
 * (issue 13). The token itself is never stored: `tokenHash` is SHA-256 of it
 * (lib/referrers/upload-token.ts). `usedAt` is set by the one upload that consumes the link, with a
 * compare-and-set (lib/services/referrer-links.ts); `filmCount` is how many films it brought.
 */
export const ReferrerUploadLinkSchema = defineEntity({
  name: 'ReferrerUploadLink',
  tableName: 'referrer_upload_link',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    case: p.manyToOne(TreatmentCaseSchema).ref().deleteRule('cascade'),
    visit: p.manyToOne(RecallVisitSchema).ref().deleteRule('cascade'),
    referrer: p.manyToOne(ReferrerSchema).ref().nullable().deleteRule('set null').default(null),
    tokenHash: p.string().length(64).unique(),
    expiresAt: p.datetime(),
    createdBy: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    createdAt: p.datetime().onCreate(() => new Date()),
    usedAt: p.datetime().nullable().default(null),
    filmCount: p.smallint().default(0),
  },
  indexes: [{ name: 'referrer_upload_link_case_index', properties: ['case', 'createdAt'] }],
});

export type ReferrerUploadLink = InferEntity<typeof ReferrerUploadLinkSchema>;
