import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { ReminderSchema } from './Reminder';
import { REPLY_ANSWERS } from './ContactLogEntry';

/**
 * A used reply link. The nonce of a signed reply token (lib/recall/reply-token.ts) is the
 * primary key: the reply service inserts it in the same transaction that changes the visit, so
 * a second use of the same link fails on the key and changes nothing.
 */
export const ReplyNonceSchema = defineEntity({
  name: 'ReplyNonce',
  tableName: 'reply_nonce',
  properties: {
    nonce: p.string().length(22).primary(),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    visit: p.manyToOne(RecallVisitSchema).ref().deleteRule('cascade'),
    reminder: p.manyToOne(ReminderSchema).ref().nullable().deleteRule('set null'),
    answer: p.enum([...REPLY_ANSWERS]),
    usedAt: p.datetime().onCreate(() => new Date()),
  },
});

export type ReplyNonce = InferEntity<typeof ReplyNonceSchema>;
