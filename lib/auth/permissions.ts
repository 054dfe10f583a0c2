/**
 * The one table of who may do what. Every page, route handler and server action asks
 * `can()` (directly or through requireActor in lib/auth/session.ts, handler in lib/http.ts and
 * assertCan in lib/auth/actor.ts); nothing else decides access.
 *
 * Patient data is health data: the administrator runs the team and settings but does not
 * read patient records; the researcher sees only anonymised cohorts.
 */
import type { Role } from './roles';

export const PERMISSIONS = {
  /** See the team list and the practice settings. */
  'team.read': ['admin'],
  /** Invite users, grant and revoke roles, change practice settings. */
  'team.manage': ['admin'],
  /** Read the audit trail. */
  'audit.read': ['admin'],
  /** Read the local dev mailbox (exists only with the local mail fake). */
  'mailbox.read': ['admin'],
  /** Read identifiable patient records and their cases. */
  'patient.read': ['coordinator', 'clinician', 'auditor'],
  /** Create and edit patients (contact details, consents). */
  'patient.write': ['coordinator', 'clinician'],
  /** Create and edit treatment cases (clinical record). */
  'case.write': ['clinician'],
  /** Import past cases from a CSV file. */
  'case.import': ['coordinator', 'clinician'],
  /** Work the recall desk: invitations, replies, bookings, no-shows. */
  'recall.manage': ['coordinator'],
  /**
   * See a case's films (thumbnails, the web rendition, the original file): whoever reads the case —
   * the clinicians who score them, the coordinator who files them, the practice lead who audits.
   */
  'film.read': ['coordinator', 'clinician', 'auditor'],
  /** Upload films to a case (the clinician at the chair; the coordinator filing films sent in). */
  'film.upload': ['coordinator', 'clinician'],
  /**
   * Write to the case's referring dentist (issue 13): send an upload link for a visit's film, send
   * the outcome letter after a review — the coordinator who arranges follow-ups and the clinicians.
   */
  'referrer.send': ['coordinator', 'clinician'],
  /** Score follow-up films and record reviews. */
  'review.write': ['clinician'],
  /** Read outcome and survival statistics. */
  'outcomes.read': ['auditor', 'clinician'],
  /**
   * Record the next step for a case on the non-healing worklist (watch, retreat, surgery, extract,
   * refer): a clinical decision, so the clinicians' alone, like the case and review records; the
   * lead (auditor) reads the worklist. The service also limits it to the clinician who treated the case.
   */
  'outcomes.decide': ['clinician'],
  /**
   * The reading queue (issue 13): see the films waiting to be read, open a film for a reading task
   * (the blinded routes check that the task is the reader's) and record a reading. Clinicians read;
   * the lead sees the practice's queue for consensus entries and the reference set.
   */
  'reading.queue': ['clinician', 'auditor'],
  /** Score films: first, blinded second, adjudication (third reader) and calibration-exercise readings. */
  'reading.score': ['clinician'],
  /** The lead's part of the reading: consensus entries, the reference set, agreement figures. */
  'reading.lead': ['auditor'],
  /** Export anonymised cohorts for research. */
  'cohort.export': ['researcher'],
} as const satisfies Record<string, readonly Role[]>;

export type Permission = keyof typeof PERMISSIONS;

export const ALL_PERMISSIONS = Object.keys(PERMISSIONS) as Permission[];

/** True when any of the roles grants the permission. */
export function can(roles: readonly Role[], permission: Permission): boolean {
  const allowed: readonly Role[] = PERMISSIONS[permission];
  return roles.some((r) => allowed.includes(r));
}

/** Every permission the roles grant, for screens that adapt to the user. */
export function permissionsOf(roles: readonly Role[]): Permission[] {
  return ALL_PERMISSIONS.filter((p) => can(roles, p));
}
