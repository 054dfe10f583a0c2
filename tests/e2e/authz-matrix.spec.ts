import { test, expect, type APIRequestContext, type Browser } from '@playwright/test';
import { readFileSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import { randomUUID } from 'node:crypto';
import { ROLES } from '../../lib/auth/roles';
import { demoUser, demoUserB, signInAs } from './support';
import { PAGES, everyone, only, type Who } from './pages';

/**
 * Every route handler, called as an anonymous visitor and as each role of two practices (the
 * demo practice A and the second demo practice B, each with its own administrator and people),
 * with the status each must answer. A route file without a row here fails the first test, and
 * a route that takes an id without a cross-practice row (CROSS) fails the second, so no route
 * can be added without saying who may call it and proving another practice's ids get nothing.
 * Requests are chosen so that an allowed caller changes nothing (an invalid body answers 422,
 * an unknown id 404, another practice's id 404).
 */
type PracticeKey = 'A' | 'B';
/** Real ids of one practice, read through the API by its own people before the matrix runs. */
interface Ids {
  adminId: string;
  coordinatorId: string;
  patientId: string;
  caseId: string;
  visitId: string;
  invitationId: string;
  filmId: string;
  /** a research cohort of the practice and an export of its first version (issue 14) */
  cohortId: string;
  exportId: string;
  reviewId: string;
  /** a referring dentist of the practice (the demo seed makes some) */
  referrerId: string;
}
interface Row {
  route: string; // the route file's path under app/, e.g. 'api/team/members'
  method: 'GET' | 'POST' | 'PATCH' | 'PUT' | 'DELETE';
  /** own: ids of the caller's practice; other: ids of the other practice. */
  url: (own: Ids, other: Ids) => string;
  body?: unknown;
  /** A multipart form's text fields instead of `body` (the film upload and the import's file reading take nothing else). */
  multipart?: Record<string, string>;
  expect: Record<Who, number>;
}

const MATRIX: Row[] = [
  { route: 'api/health', method: 'GET', url: () => '/api/health', expect: everyone(200) },
  { route: 'api/[...path]', method: 'GET', url: () => '/api/no-such-route', expect: everyone(404) },
  { route: 'api/auth/[...nextauth]', method: 'GET', url: () => '/api/auth/providers', expect: everyone(200) },
  { route: 'api/team/members', method: 'GET', url: () => '/api/team/members', expect: only({ admin: 200 }) },
  { route: 'api/team/members/[userId]', method: 'PATCH', url: () => `/api/team/members/${randomUUID()}`, body: { roles: ['clinician'] }, expect: only({ admin: 404 }) },
  { route: 'api/team/members/[userId]', method: 'DELETE', url: () => `/api/team/members/${randomUUID()}`, expect: only({ admin: 404 }) },
  // Nobody grants roles to themselves or deactivates themselves (issue 9, item 2): the practice's
  // administrator calling with their own id gets 403 with a reason (see the test below).
  { route: 'api/team/members/[userId]', method: 'PATCH', url: (own) => `/api/team/members/${own.adminId}`, body: { roles: ['admin', 'clinician', 'coordinator'] }, expect: only({}) },
  { route: 'api/team/members/[userId]', method: 'DELETE', url: (own) => `/api/team/members/${own.adminId}`, expect: only({}) },
  { route: 'api/team/invitations', method: 'GET', url: () => '/api/team/invitations', expect: only({ admin: 200 }) },
  { route: 'api/team/invitations', method: 'POST', url: () => '/api/team/invitations', body: { email: 'not-an-address' }, expect: only({ admin: 422 }) },
  { route: 'api/team/invitations/[id]', method: 'DELETE', url: () => `/api/team/invitations/${randomUUID()}`, expect: only({ admin: 404 }) },
  { route: 'api/team/invitations/[id]/resend', method: 'POST', url: () => `/api/team/invitations/${randomUUID()}/resend`, expect: only({ admin: 404 }) },
  { route: 'api/audit', method: 'GET', url: () => '/api/audit?page=1', expect: only({ admin: 200 }) },
  { route: 'api/audit/export', method: 'GET', url: () => '/api/audit/export?action=nothing.matches', expect: only({ admin: 200 }) },
  // Outcomes (issue 12): the practice lead and the clinicians (a clinician sees their own cases).
  { route: 'api/outcomes/overview', method: 'GET', url: () => '/api/outcomes/overview', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/factor', method: 'GET', url: () => '/api/outcomes/factor?factor=kind', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/curves', method: 'GET', url: () => '/api/outcomes/curves?endpoint=tooth', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/export', method: 'GET', url: () => '/api/outcomes/export?view=overview', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/model', method: 'GET', url: () => '/api/outcomes/model?covariates=kind,lesion', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/funnel', method: 'GET', url: () => '/api/outcomes/funnel?measure=latest', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/report', method: 'GET', url: () => '/api/outcomes/report?factor=kind', expect: only({ clinician: 200, auditor: 200 }) },
  // The non-healing worklist: both read it; only a clinician records a next step (outcomes.decide).
  { route: 'api/outcomes/worklist', method: 'GET', url: () => '/api/outcomes/worklist', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/worklist/export', method: 'GET', url: () => '/api/outcomes/worklist/export', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/outcomes/worklist/[id]/decisions', method: 'GET', url: () => `/api/outcomes/worklist/${randomUUID()}/decisions`, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/outcomes/worklist/[id]/decisions', method: 'POST', url: () => `/api/outcomes/worklist/${randomUUID()}/decisions`, body: { step: 'watch' }, expect: only({ clinician: 404 }) },
  { route: 'api/dev-mailbox', method: 'GET', url: () => '/api/dev-mailbox', expect: only({ admin: 200 }) },
  // Registry (issue 4): readers of patient data are the coordinator, the clinicians and the practice lead.
  { route: 'api/patients', method: 'GET', url: () => '/api/patients?page=1&pageSize=5', expect: only({ coordinator: 200, clinician: 200, auditor: 200 }) },
  { route: 'api/patients', method: 'POST', url: () => '/api/patients', body: { registryNumber: '' }, expect: only({ coordinator: 422, clinician: 422 }) },
  { route: 'api/patients/[id]', method: 'GET', url: () => `/api/patients/${randomUUID()}`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/patients/[id]', method: 'PATCH', url: () => `/api/patients/${randomUUID()}`, body: { phone: '01632 960000' }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/patients/[id]', method: 'DELETE', url: () => `/api/patients/${randomUUID()}`, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/cases', method: 'GET', url: () => '/api/cases?pageSize=5&kind=primary_treatment&sort=tooth', expect: only({ coordinator: 200, clinician: 200, auditor: 200 }) },
  { route: 'api/cases', method: 'POST', url: () => '/api/cases', body: { tooth: 19 }, expect: only({ clinician: 422 }) },
  { route: 'api/cases/[id]', method: 'GET', url: () => `/api/cases/${randomUUID()}`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]', method: 'PATCH', url: () => `/api/cases/${randomUUID()}`, body: { sealerClass: 'epoxy_resin' }, expect: only({ clinician: 404 }) },
  { route: 'api/cases/[id]', method: 'DELETE', url: () => `/api/cases/${randomUUID()}`, expect: only({ clinician: 404 }) },
  { route: 'api/cases/[id]/visits', method: 'GET', url: () => `/api/cases/${randomUUID()}/visits`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]/reviews', method: 'GET', url: () => `/api/cases/${randomUUID()}/reviews`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]/reviews', method: 'POST', url: () => `/api/cases/${randomUUID()}/reviews`, body: { toothStatus: 'present' }, expect: only({ clinician: 404 }) },
  { route: 'api/cases/[id]/reviews/[reviewId]/correction', method: 'POST', url: () => `/api/cases/${randomUUID()}/reviews/${randomUUID()}/correction`, body: { reason: 'Typo in the PAI.' }, expect: only({ clinician: 404 }) },
  // Films (issue 13): read by whoever reads the case, uploaded by the clinicians and the coordinator.
  { route: 'api/cases/[id]/films', method: 'GET', url: () => `/api/cases/${randomUUID()}/films`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]/films', method: 'POST', url: () => `/api/cases/${randomUUID()}/films`, multipart: { role: 'follow_up' }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/cases/[id]/films', method: 'POST', url: (own) => `/api/cases/${own.caseId}/films`, multipart: { role: 'follow_up' }, expect: only({ coordinator: 422, clinician: 422 }) },
  { route: 'api/films/[id]/[variant]', method: 'GET', url: () => `/api/films/${randomUUID()}/thumbnail`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/films/[id]/[variant]', method: 'GET', url: (own) => `/api/films/${own.filmId}/thumbnail`, expect: only({ coordinator: 200, clinician: 200, auditor: 200 }) },
  // The reading queue (issue 13): clinicians read, the lead sees the practice's queue; a film with no blinded task is unknown to the reader.
  { route: 'api/reading/queue', method: 'GET', url: () => '/api/reading/queue?scope=practice', expect: only({ clinician: 200, auditor: 200 }) },
  { route: 'api/reading/blinded/[id]', method: 'GET', url: () => `/api/reading/blinded/${randomUUID()}`, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/reading/blinded/[id]', method: 'GET', url: (own) => `/api/reading/blinded/${own.filmId}`, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/reading/blinded/[id]/image', method: 'GET', url: (own) => `/api/reading/blinded/${own.filmId}/image`, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/reading/films/[id]/readings', method: 'POST', url: () => `/api/reading/films/${randomUUID()}/readings`, body: { kind: 'first', pai: 2 }, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/reading/reference/[id]', method: 'PUT', url: () => `/api/reading/reference/${randomUUID()}`, body: { pai: 2 }, expect: only({ auditor: 404 }) },
  { route: 'api/outcomes/agreement', method: 'GET', url: () => '/api/outcomes/agreement', expect: only({ auditor: 200 }) },
  { route: 'api/films/[id]/calibration', method: 'PUT', url: () => `/api/films/${randomUUID()}/calibration`, body: { source: 'dicom' }, expect: only({ clinician: 404 }) },
  // The matrix's film is a PNG: no DICOM pixel spacing to calibrate from (422, nothing changed).
  { route: 'api/films/[id]/calibration', method: 'PUT', url: (own) => `/api/films/${own.filmId}/calibration`, body: { source: 'dicom' }, expect: only({ clinician: 422 }) },
  { route: 'api/films/[id]/measurement', method: 'PUT', url: () => `/api/films/${randomUUID()}/measurement`, body: {}, expect: only({ clinician: 404 }) },
  { route: 'api/films/[id]/measurement', method: 'PUT', url: (own) => `/api/films/${own.filmId}/measurement`, body: {}, expect: only({ clinician: 422 }) },
  { route: 'api/cases/import', method: 'GET', url: () => '/api/cases/import', expect: only({ coordinator: 200, clinician: 200 }) },
  { route: 'api/cases/import', method: 'POST', url: () => '/api/cases/import', body: { csv: '' }, expect: only({ coordinator: 422, clinician: 422 }) },
  { route: 'api/cases/import/read', method: 'POST', url: () => '/api/cases/import/read', multipart: { sheet: 'none' }, expect: only({ coordinator: 422, clinician: 422 }) },
  { route: 'api/reviews/import', method: 'GET', url: () => '/api/reviews/import', expect: only({ coordinator: 200, clinician: 200 }) },
  { route: 'api/reviews/import', method: 'POST', url: () => '/api/reviews/import?mode=dry-run', body: { csv: '' }, expect: only({ coordinator: 422, clinician: 422 }) },
  { route: 'api/reviews/import/read', method: 'POST', url: () => '/api/reviews/import/read', body: {}, expect: only({ coordinator: 422, clinician: 422 }) },
  { route: 'api/visits/[id]', method: 'PATCH', url: () => `/api/visits/${randomUUID()}`, body: { status: 'invited' }, expect: only({ coordinator: 404 }) },
  { route: 'api/practice/settings', method: 'GET', url: () => '/api/practice/settings', expect: only({ admin: 200 }) },
  { route: 'api/practice/settings', method: 'PATCH', url: () => '/api/practice/settings', body: {}, expect: only({ admin: 422 }) },
  { route: 'api/referrers', method: 'GET', url: () => '/api/referrers', expect: only({ coordinator: 200, clinician: 200, auditor: 200 }) },
  { route: 'api/referrers', method: 'POST', url: () => '/api/referrers', body: { name: '' }, expect: only({ coordinator: 422, clinician: 422 }) },
  { route: 'api/referrers/[id]', method: 'PATCH', url: () => `/api/referrers/${randomUUID()}`, body: { email: 'matrix@referrers.test.invalid' }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/clinicians', method: 'GET', url: () => '/api/clinicians', expect: only({ coordinator: 200, clinician: 200, auditor: 200 }) },
  // Recall desk (issue 5): the coordinator works the desk; nobody else reads or changes it.
  { route: 'api/recall/queues', method: 'GET', url: () => '/api/recall/queues', expect: only({ coordinator: 200 }) },
  { route: 'api/recall/visits', method: 'GET', url: () => '/api/recall/visits?queue=due_soon&pageSize=5', expect: only({ coordinator: 200 }) },
  { route: 'api/recall/visits/[id]/contact-log', method: 'GET', url: () => `/api/recall/visits/${randomUUID()}/contact-log`, expect: only({ coordinator: 404 }) },
  { route: 'api/recall/visits/[id]/notes', method: 'POST', url: () => `/api/recall/visits/${randomUUID()}/notes`, body: { note: 'No answer.', reached: false }, expect: only({ coordinator: 404 }) },
  { route: 'api/recall/send', method: 'POST', url: () => '/api/recall/send', body: { visitIds: [] }, expect: only({ coordinator: 422 }) },
  { route: 'api/recall/book', method: 'POST', url: () => '/api/recall/book', body: { visitIds: [randomUUID()], start: 'next week', mode: 'phone' }, expect: only({ coordinator: 422 }) },
  { route: 'api/recall/mark', method: 'POST', url: () => '/api/recall/mark', body: { visitIds: [randomUUID()], status: 'attended' }, expect: only({ coordinator: 404 }) },
  { route: 'api/recall/rate', method: 'GET', url: () => '/api/recall/rate', expect: only({ coordinator: 200 }) },
  { route: 'api/recall/policy', method: 'GET', url: () => '/api/recall/policy', expect: only({ coordinator: 200 }) },
  { route: 'api/recall/policy', method: 'PUT', url: () => '/api/recall/policy', body: { invitationWeeksBefore: 0 }, expect: only({ coordinator: 422 }) },
  // Referring dentists (issue 13): links and letters are sent by the coordinator and the clinicians.
  { route: 'api/cases/[id]/referrer-links', method: 'POST', url: () => `/api/cases/${randomUUID()}/referrer-links`, body: { visitId: randomUUID() }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/referrers/[id]', method: 'PATCH', url: (_, o) => `/api/referrers/${o.referrerId}`, body: { practiceName: 'Matrix Dental' }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/reviews/[id]/letter', method: 'POST', url: () => `/api/reviews/${randomUUID()}/letter`, expect: only({ coordinator: 404, clinician: 404 }) },
  // The referrer's upload link (no account; the token is the credential): the same answer for everyone.
  { route: 'api/upload/[token]', method: 'GET', url: () => '/api/upload/not-a-token', expect: everyone(404) },
  { route: 'api/upload/[token]', method: 'POST', url: () => '/api/upload/not-a-token', expect: everyone(404) },
  { route: 'upload/[token]', method: 'GET', url: () => '/upload/not-a-token', expect: everyone(200) },
  // Patients' links (no account; the signed token is the credential): the same answer for everyone.
  // Research cohorts (issue 14): the researcher alone; nobody else, and the researcher reaches no identifiable route (rows above).
  { route: 'api/cohorts', method: 'GET', url: () => '/api/cohorts', expect: only({ researcher: 200 }) },
  { route: 'api/cohorts', method: 'POST', url: () => '/api/cohorts', body: { name: '' }, expect: only({ researcher: 422 }) },
  { route: 'api/cohorts/counts', method: 'GET', url: () => '/api/cohorts/counts?kind=primary_treatment', expect: only({ researcher: 200 }) },
  { route: 'api/cohorts/[id]', method: 'GET', url: () => `/api/cohorts/${randomUUID()}`, expect: only({ researcher: 404 }) },
  { route: 'api/cohorts/[id]/versions', method: 'POST', url: () => `/api/cohorts/${randomUUID()}/versions`, body: { variables: [] }, expect: only({ researcher: 404 }) },
  { route: 'api/cohorts/[id]/exports', method: 'POST', url: () => `/api/cohorts/${randomUUID()}/exports`, body: { version: 1 }, expect: only({ researcher: 404 }) },
  { route: 'api/cohort-exports/[id]', method: 'GET', url: () => `/api/cohort-exports/${randomUUID()}`, expect: only({ researcher: 404 }) },
  { route: 'api/cohort-exports/[id]/cancel', method: 'POST', url: () => `/api/cohort-exports/${randomUUID()}/cancel`, expect: only({ researcher: 404 }) },
  { route: 'api/cohort-exports/[id]/download', method: 'GET', url: () => `/api/cohort-exports/${randomUUID()}/download?token=not-a-real-token`, expect: only({ researcher: 404 }) },
  { route: 'api/unsubscribe/[token]', method: 'POST', url: () => '/api/unsubscribe/not-a-token', expect: everyone(400) },
  { route: 'api/unsubscribe/[token]', method: 'GET', url: () => '/api/unsubscribe/not-a-token', expect: everyone(303) },
  { route: 'r/[token]', method: 'GET', url: () => '/r/not-a-token?answer=confirmed', expect: everyone(200) },
  { route: 'u/[token]', method: 'GET', url: () => '/u/not-a-token', expect: everyone(200) },
];

/**
 * The other practice's real ids on every route that takes an id: whoever may call the route
 * gets 404 (as for an id that does not exist), everyone else 403, and nothing is read or changed.
 */
const CROSS: Row[] = [
  { route: 'api/team/members/[userId]', method: 'PATCH', url: (_, o) => `/api/team/members/${o.coordinatorId}`, body: { roles: ['admin'] }, expect: only({ admin: 404 }) },
  { route: 'api/team/members/[userId]', method: 'DELETE', url: (_, o) => `/api/team/members/${o.coordinatorId}`, expect: only({ admin: 404 }) },
  { route: 'api/team/invitations/[id]', method: 'DELETE', url: (_, o) => `/api/team/invitations/${o.invitationId}`, expect: only({ admin: 404 }) },
  { route: 'api/team/invitations/[id]/resend', method: 'POST', url: (_, o) => `/api/team/invitations/${o.invitationId}/resend`, expect: only({ admin: 404 }) },
  { route: 'api/patients/[id]', method: 'GET', url: (_, o) => `/api/patients/${o.patientId}`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/patients/[id]', method: 'PATCH', url: (_, o) => `/api/patients/${o.patientId}`, body: { phone: '01632 960001' }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/patients/[id]', method: 'DELETE', url: (_, o) => `/api/patients/${o.patientId}`, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/cases/[id]', method: 'GET', url: (_, o) => `/api/cases/${o.caseId}`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]', method: 'PATCH', url: (_, o) => `/api/cases/${o.caseId}`, body: { sealerClass: 'epoxy_resin' }, expect: only({ clinician: 404 }) },
  { route: 'api/cases/[id]', method: 'DELETE', url: (_, o) => `/api/cases/${o.caseId}`, expect: only({ clinician: 404 }) },
  { route: 'api/cases/[id]/visits', method: 'GET', url: (_, o) => `/api/cases/${o.caseId}/visits`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]/reviews', method: 'GET', url: (_, o) => `/api/cases/${o.caseId}/reviews`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]/reviews', method: 'POST', url: (_, o) => `/api/cases/${o.caseId}/reviews`, body: { toothStatus: 'present' }, expect: only({ clinician: 404 }) },
  { route: 'api/cases/[id]/reviews/[reviewId]/correction', method: 'POST', url: (_, o) => `/api/cases/${o.caseId}/reviews/${randomUUID()}/correction`, body: { reason: 'Typo in the PAI.' }, expect: only({ clinician: 404 }) },
  { route: 'api/cases/[id]/films', method: 'GET', url: (_, o) => `/api/cases/${o.caseId}/films`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/cases/[id]/films', method: 'POST', url: (_, o) => `/api/cases/${o.caseId}/films`, multipart: { role: 'follow_up' }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/films/[id]/[variant]', method: 'GET', url: (_, o) => `/api/films/${o.filmId}/original`, expect: only({ coordinator: 404, clinician: 404, auditor: 404 }) },
  { route: 'api/reading/blinded/[id]', method: 'GET', url: (_, o) => `/api/reading/blinded/${o.filmId}`, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/reading/blinded/[id]/image', method: 'GET', url: (_, o) => `/api/reading/blinded/${o.filmId}/image`, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/reading/films/[id]/readings', method: 'POST', url: (_, o) => `/api/reading/films/${o.filmId}/readings`, body: { kind: 'first', pai: 2 }, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/reading/reference/[id]', method: 'PUT', url: (_, o) => `/api/reading/reference/${o.filmId}`, body: { pai: 2 }, expect: only({ auditor: 404 }) },
  { route: 'api/films/[id]/calibration', method: 'PUT', url: (_, o) => `/api/films/${o.filmId}/calibration`, body: { source: 'dicom' }, expect: only({ clinician: 404 }) },
  { route: 'api/films/[id]/measurement', method: 'PUT', url: (_, o) => `/api/films/${o.filmId}/measurement`, body: {}, expect: only({ clinician: 404 }) },
  { route: 'api/visits/[id]', method: 'PATCH', url: (_, o) => `/api/visits/${o.visitId}`, body: { status: 'invited' }, expect: only({ coordinator: 404 }) },
  { route: 'api/cases/[id]/referrer-links', method: 'POST', url: (_, o) => `/api/cases/${o.caseId}/referrer-links`, body: { visitId: randomUUID() }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/referrers/[id]', method: 'PATCH', url: (_, o) => `/api/referrers/${o.referrerId}`, body: { practiceName: 'Matrix Dental' }, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/reviews/[id]/letter', method: 'POST', url: (_, o) => `/api/reviews/${o.reviewId}/letter`, expect: only({ coordinator: 404, clinician: 404 }) },
  { route: 'api/recall/visits/[id]/contact-log', method: 'GET', url: (_, o) => `/api/recall/visits/${o.visitId}/contact-log`, expect: only({ coordinator: 404 }) },
  { route: 'api/recall/visits/[id]/notes', method: 'POST', url: (_, o) => `/api/recall/visits/${o.visitId}/notes`, body: { note: 'No answer.', reached: false }, expect: only({ coordinator: 404 }) },
  { route: 'api/outcomes/worklist/[id]/decisions', method: 'GET', url: (_, o) => `/api/outcomes/worklist/${o.caseId}/decisions`, expect: only({ clinician: 404, auditor: 404 }) },
  { route: 'api/outcomes/worklist/[id]/decisions', method: 'POST', url: (_, o) => `/api/outcomes/worklist/${o.caseId}/decisions`, body: { step: 'watch' }, expect: only({ clinician: 404 }) },
  { route: 'api/cohorts/[id]', method: 'GET', url: (_, o) => `/api/cohorts/${o.cohortId}`, expect: only({ researcher: 404 }) },
  { route: 'api/cohorts/[id]/versions', method: 'POST', url: (_, o) => `/api/cohorts/${o.cohortId}/versions`, body: { variables: [] }, expect: only({ researcher: 404 }) },
  { route: 'api/cohorts/[id]/exports', method: 'POST', url: (_, o) => `/api/cohorts/${o.cohortId}/exports`, body: { version: 1 }, expect: only({ researcher: 404 }) },
  { route: 'api/cohort-exports/[id]', method: 'GET', url: (_, o) => `/api/cohort-exports/${o.exportId}`, expect: only({ researcher: 404 }) },
  { route: 'api/cohort-exports/[id]/cancel', method: 'POST', url: (_, o) => `/api/cohort-exports/${o.exportId}/cancel`, expect: only({ researcher: 404 }) },
  { route: 'api/cohort-exports/[id]/download', method: 'GET', url: (_, o) => `/api/cohort-exports/${o.exportId}/download?token=${o.exportId}.x.1.y`, expect: only({ researcher: 404 }) },
];

/** Routes whose id is a signed token (the credential itself) or a path no route serves, not a record of a practice. */
const NOT_PRACTICE_IDS = new Set(['api/[...path]', 'api/auth/[...nextauth]', 'api/unsubscribe/[token]', 'api/upload/[token]', 'r/[token]', 'u/[token]', 'upload/[token]']);

function routeFiles(dir: string, base = dir): string[] {
  return readdirSync(dir).flatMap((name) => {
    const full = path.join(dir, name);
    if (statSync(full).isDirectory()) return routeFiles(full, base);
    return name === 'route.ts' ? [path.relative(base, dir).split(path.sep).join('/')] : [];
  });
}

const appRoutes = () => routeFiles(path.resolve(import.meta.dirname, '../../app')).map((r) => r.replace(/\([^)]+\)\//g, ''));

test('every route handler has a row in the matrix', () => {
  const covered = new Set(MATRIX.map((r) => r.route));
  expect(appRoutes().filter((r) => !covered.has(r)), 'routes without a row').toEqual([]);
});

test('every route that takes an id has a cross-practice row', () => {
  const covered = new Set(CROSS.map((r) => r.route));
  const idRoutes = appRoutes().filter((r) => r.includes('[') && !NOT_PRACTICE_IDS.has(r));
  expect(idRoutes.filter((r) => !covered.has(r)), 'id-taking routes without a cross-practice row').toEqual([]);
});

async function contextFor(browser: Browser, who: Who, practice: PracticeKey): Promise<{ request: APIRequestContext; close: () => Promise<void> }> {
  // Writes carry the Origin a browser sends from Lamina's own pages (lib/http.ts refuses others).
  const context = await browser.newContext({ extraHTTPHeaders: { Origin: new URL(process.env.E2E_BASE_URL ?? 'http://127.0.0.1:3000').origin } });
  if (who !== 'anonymous') await signInAs(await context.newPage(), who, practice);
  return { request: context.request, close: () => context.close() };
}

/** Reads real ids of a practice through the API, as its own people, and leaves one pending invitation. */
async function idsOf(browser: Browser, practice: PracticeKey): Promise<Ids> {
  const admin = await contextFor(browser, 'admin', practice);
  const coord = await contextFor(browser, 'coordinator', practice);
  const researcher = await contextFor(browser, 'researcher', practice);
  try {
    const members = (await (await admin.request.get('/api/team/members')).json()).members as { userId: string; email: string }[];
    const byEmail = (email: string) => members.find((m) => m.email === email)!.userId;
    const people = practice === 'A' ? demoUser : demoUserB;
    const invited = await admin.request.post('/api/team/invitations', {
      data: { email: `matrix.${practice.toLowerCase()}.${Date.now()}@lamina-demo.invalid`, name: 'Matrix Invitee', roles: ['researcher'] },
    });
    expect(invited.status()).toBe(201);
    const patients = await (await coord.request.get('/api/patients?page=1&pageSize=1')).json();
    const cases = (await (await coord.request.get('/api/cases?pageSize=10')).json()).rows as { id: string }[];
    let caseId = '';
    let visits: { visits: { id: string }[] } = { visits: [] };
    for (const c of cases) {
      caseId = c.id;
      visits = await (await coord.request.get(`/api/cases/${caseId}/visits`)).json();
      if (visits.visits.length > 0) break;
    }
    // A film of the practice (the same file again is the same film: reruns add nothing).
    const film = await coord.request.post(`/api/cases/${caseId}/films`, {
      multipart: { role: 'follow_up', file: { name: 'matrix.png', mimeType: 'image/png', buffer: readFileSync(path.resolve(import.meta.dirname, '../support/films/radiograph.png')) } },
    });
    expect([200, 201]).toContain(film.status());
    // A research cohort with one saved version and an export of it (a rerun starts none while one is under way).
    const cohort = await researcher.request.post('/api/cohorts', { data: { name: `Matrix cohort ${practice}` } });
    expect(cohort.status()).toBe(200);
    const cohortId = (await cohort.json()).id as string;
    expect((await researcher.request.post(`/api/cohorts/${cohortId}/versions`, { data: { filters: { kind: 'primary_treatment' }, variables: [] } })).status()).toBe(200);
    expect((await researcher.request.post(`/api/cohorts/${cohortId}/exports`, { data: { version: 1 } })).status()).toBe(202);
    const exportId = (await (await researcher.request.get(`/api/cohorts/${cohortId}`)).json()).exports[0].id as string;
    // A review of the practice (the demo world has many), for the outcome letter's route.
    // The oldest cases of the demo world have their reviews (the newest, the list's default order, have none yet).
    let reviewId = '';
    const oldest = (await (await coord.request.get('/api/cases?pageSize=20&sort=completionDate&dir=asc')).json()).rows as { id: string }[];
    for (const c of oldest) {
      const r = (await (await coord.request.get(`/api/cases/${c.id}/reviews`)).json()) as { reviews?: { id: string }[] };
      if (r.reviews?.length) {
        reviewId = r.reviews[0]!.id;
        break;
      }
    }
    expect(reviewId).not.toBe('');
    // A referring dentist of the practice: the demo's, or one made on the first run (found again on reruns).
    const referrers = (await (await coord.request.get('/api/referrers?pageSize=1')).json()).rows as { id: string }[];
    let referrerId = referrers[0]?.id;
    if (!referrerId) {
      const made = await coord.request.post('/api/referrers', { data: { name: `Dr Matrix ${practice}` } });
      expect(made.status()).toBe(201);
      referrerId = (await made.json()).referrer.id as string;
    }
    return {
      referrerId,
      cohortId,
      exportId,
      adminId: byEmail(people('admin').email),
      coordinatorId: byEmail(people('coordinator').email),
      patientId: patients.rows[0].id,
      caseId,
      visitId: visits.visits[0].id,
      invitationId: (await invited.json()).invitationId,
      filmId: (await film.json()).film.id,
      reviewId,
    };
  } finally {
    await admin.close();
    await coord.close();
    await researcher.close();
  }
}

const ids: Partial<Record<PracticeKey, Ids>> = {};

test.describe('route × role × practice', () => {
  // Eleven sign-ins and about 65 requests each: more than the default 30 s on a busy machine.
  test.describe.configure({ timeout: 120_000 });
  test.beforeAll(async ({ browser }) => {
    test.setTimeout(120_000);
    ids.A = await idsOf(browser, 'A');
    ids.B = await idsOf(browser, 'B');
    expect(ids.A.patientId).not.toBe(ids.B.patientId);
  });

  const callers: [Who, PracticeKey][] = [['anonymous', 'A'], ...ROLES.map((r) => [r, 'A'] as [Who, PracticeKey]), ...ROLES.map((r) => [r, 'B'] as [Who, PracticeKey])];

  for (const [who, practice] of callers) {
    test(`route statuses as ${who === 'anonymous' ? who : `${who} of practice ${practice}`}`, async ({ browser }) => {
      const { request, close } = await contextFor(browser, who, practice);
      const own = ids[practice]!;
      const other = ids[practice === 'A' ? 'B' : 'A']!;
      try {
        const seen: string[] = [];
        const wanted: string[] = [];
        for (const [kind, rows] of [['', MATRIX], ['cross-practice ', CROSS]] as const) {
          for (const row of rows) {
            const url = row.url(own, other); // once: rows with unknown ids draw a new one per call
            const res = await request.fetch(url, {
              method: row.method,
              ...(row.multipart ? { multipart: row.multipart } : { data: row.body }),
              headers: row.body ? { 'Content-Type': 'application/json' } : undefined,
              maxRedirects: 0,
            });
            seen.push(`${kind}${row.method} ${url} → ${res.status()}`);
            wanted.push(`${kind}${row.method} ${url} → ${row.expect[who]}`);
            if (res.status() === 401 || res.status() === 403) {
              expect(res.headers()['content-type']).toContain('application/json');
            }
          }
        }
        expect(seen).toEqual(wanted);
      } finally {
        await close();
      }
    });
  }

  test('an administrator changing or deactivating themselves gets 403 with a reason, in either practice (issue 9, item 2)', async ({ browser }) => {
    for (const practice of ['A', 'B'] as const) {
      const { request, close } = await contextFor(browser, 'admin', practice);
      try {
        const self = ids[practice]!.adminId;
        const patch = await request.patch(`/api/team/members/${self}`, { data: { roles: ['admin', 'clinician'] } });
        expect(patch.status()).toBe(403);
        expect((await patch.json()).message).toMatch(/cannot change the roles of yourself.*another administrator/i);
        const del = await request.delete(`/api/team/members/${self}`);
        expect(del.status()).toBe(403);
        expect((await del.json()).message).toMatch(/cannot deactivate yourself/i);
        const members = (await (await request.get('/api/team/members')).json()).members as { userId: string; roles: string[] }[];
        expect(members.find((m) => m.userId === self)?.roles).toEqual(['admin']);
      } finally {
        await close();
      }
    }
  });
});

// The page matrix (PAGES) lives in ./pages.ts: the accessibility spec walks the same pages.

function pageFiles(dir: string, base = dir): string[] {
  return readdirSync(dir).flatMap((name) => {
    const full = path.join(dir, name);
    if (statSync(full).isDirectory()) return pageFiles(full, base);
    return name === 'page.tsx' ? [path.relative(base, dir).split(path.sep).join('/')] : [];
  });
}

test('every signed-in page has a row in the page matrix', () => {
  const area = path.resolve(import.meta.dirname, '../../app/(app)');
  const pages = pageFiles(area).map((p) => p.replace(/\([^)]+\)\/?/g, '').replace(/\/$/, ''));
  const covered = new Set(PAGES.map((r) => r.page));
  expect(pages.filter((p) => !covered.has(p)), 'pages without a row').toEqual([]);
});

for (const who of ['anonymous', ...ROLES] as Who[]) {
  test(`page statuses as ${who}`, async ({ browser }) => {
    const { request, close } = await contextFor(browser, who, 'A');
    try {
      const seen: string[] = [];
      const wanted: string[] = [];
      for (const row of PAGES) {
        const res = await request.get(row.url(), { maxRedirects: 0 });
        seen.push(`${row.page || '/'} → ${res.status()}`);
        wanted.push(`${row.page || '/'} → ${row.expect[who]}`);
      }
      expect(seen).toEqual(wanted);
    } finally {
      await close();
    }
  });
}
