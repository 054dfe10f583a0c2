/** Every entity, listed explicitly (no glob): the ORM config and migrations read this list. */
import { AuditEventSchema } from './AuditEvent';
import { CaseDecisionSchema } from './CaseDecision';
import { CohortSchema } from './Cohort';
import { CohortExportSchema } from './CohortExport';
import { CohortVersionSchema } from './CohortVersion';
import { ContactLogEntrySchema } from './ContactLogEntry';
import { FilmSchema } from './Film';
import { FilmReadingSchema } from './FilmReading';
import { ImportMappingSchema } from './ImportMapping';
import { InvitationSchema } from './Invitation';
import { MembershipSchema } from './Membership';
import { CaseListVersionSchema } from './CaseListVersion';
import { OutcomesDataChangeSchema } from './OutcomesDataChange';
import { OutcomesDataVersionSchema } from './OutcomesDataVersion';
import { PatientSchema } from './Patient';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { ReferenceFilmSchema } from './ReferenceFilm';
import { ReferrerSchema } from './Referrer';
import { ReferrerMessageSchema } from './ReferrerMessage';
import { ReferrerUploadLinkSchema } from './ReferrerUploadLink';
import { ReminderSchema } from './Reminder';
import { ReplyNonceSchema } from './ReplyNonce';
import { ReviewSchema } from './Review';
import { TreatmentCaseSchema } from './TreatmentCase';
import { UserSchema } from './User';
import { VerificationTokenSchema } from './VerificationToken';

export const entities = [
  PracticeSchema,
  UserSchema,
  MembershipSchema,
  AuditEventSchema,
  InvitationSchema,
  VerificationTokenSchema,
  PatientSchema,
  ReferrerSchema,
  TreatmentCaseSchema,
  RecallVisitSchema,
  ReviewSchema,
  ReminderSchema,
  ContactLogEntrySchema,
  ReplyNonceSchema,
  CaseDecisionSchema,
  OutcomesDataVersionSchema,
  OutcomesDataChangeSchema,
  CaseListVersionSchema,
  FilmSchema,
  ImportMappingSchema,
  CohortSchema,
  CohortVersionSchema,
  CohortExportSchema,
  FilmReadingSchema,
  ReferenceFilmSchema,
  ReferrerUploadLinkSchema,
  ReferrerMessageSchema,
];

export * from './AuditEvent';
export * from './CaseDecision';
export * from './CaseListVersion';
export * from './Cohort';
export * from './CohortExport';
export * from './CohortVersion';
export * from './ContactLogEntry';
export * from './Film';
export * from './FilmReading';
export * from './ImportMapping';
export * from './Invitation';
export * from './Membership';
export * from './OutcomesDataChange';
export * from './OutcomesDataVersion';
export * from './Patient';
export * from './Practice';
export * from './RecallVisit';
export * from './ReferenceFilm';
export * from './Referrer';
export * from './ReferrerMessage';
export * from './ReferrerUploadLink';
export * from './Reminder';
export * from './ReplyNonce';
export * from './Review';
export * from './TreatmentCase';
export * from './User';
export * from './VerificationToken';
