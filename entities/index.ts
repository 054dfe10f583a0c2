/** Every entity, listed explicitly (no glob): the ORM config and migrations read this list. */
import { AuditEventSchema } from './AuditEvent';
import { InvitationSchema } from './Invitation';
import { MembershipSchema } from './Membership';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';
import { VerificationTokenSchema } from './VerificationToken';

export const entities = [
  PracticeSchema,
  UserSchema,
  MembershipSchema,
  AuditEventSchema,
  InvitationSchema,
  VerificationTokenSchema,
];

export * from './AuditEvent';
export * from './Invitation';
export * from './Membership';
export * from './Practice';
export * from './User';
export * from './VerificationToken';
