/**
 * The audit trail in plain words: what each recorded action means, the kinds of record it names,
 * and a short summary of its detail. Pure: no database, no React.
 *
 * Action codes stay as they are stored ("case.read"); screens and the CSV export show these words.
 * A code without an entry here (written by newer code) still reads as words: "review.archived"
 * becomes "Review archived". tests/unit/audit/words.test.ts checks that every code written in
 * lib/ and jobs/ has an entry.
 */

export interface ActionGroup {
  /** The prefix its codes share, used as the action filter's value for the whole group. */
  prefix: string;
  label: string;
  actions: Record<string, string>;
}

export const ACTION_GROUPS: readonly ActionGroup[] = [
  {
    prefix: 'auth.',
    label: 'Sign-ins',
    actions: {
      'auth.sign_in': 'Signed in',
      'auth.sign_in_failed': 'Sign-in failed',
      'auth.sign_in_limited': 'Sign-in held back after repeated wrong passwords',
      'auth.link_limited': 'Sign-in link request held back (too many requests)',
      'auth.password_changed': 'Changed their password',
      'auth.practice_chosen': 'Chose the practice to work in',
      'auth.sessions_ended': 'Signed out (sessions ended)',
    },
  },
  {
    prefix: 'team.',
    label: 'Team and roles',
    actions: {
      'team.invited': 'Invited a team member',
      'team.invitation_accepted': 'Accepted an invitation',
      'team.role_granted': 'Granted a role',
      'team.role_revoked': 'Revoked a role',
      'team.invitation_resent': 'Sent an invitation again',
      'team.invitation_revoked': 'Withdrew an invitation',
      'team.member_deactivated': 'Deactivated a team member',
      'team.member_reactivated': 'Reactivated a team member',
    },
  },
  {
    prefix: 'patient.',
    label: 'Patients',
    actions: {
      'patient.list': 'Viewed the patient list',
      'patient.read': 'Opened a patient’s record',
      'patient.created': 'Registered a patient',
      'patient.updated': 'Changed a patient’s details',
      'patient.archived': 'Archived a patient',
      'patient.restored': 'Restored a patient',
      'patient.consent_withdrawn': 'Recall contact consent withdrawn',
    },
  },
  {
    prefix: 'case.',
    label: 'Cases',
    actions: {
      'case.list': 'Viewed the case list',
      'case.read': 'Opened a case',
      'case.created': 'Registered a case',
      'case.updated': 'Changed a case',
      'case.archived': 'Archived a case',
      'case.restored': 'Restored a case',
      'case.import_checked': 'Checked a case import file',
      'case.imported': 'Imported cases',
      'case.imported_valid_rows': 'Imported the valid rows of a case file (rejected rows left out)',
    },
  },
  {
    prefix: 'review.',
    label: 'Reviews',
    actions: {
      'review.list': 'Viewed a case’s reviews',
      'review.created': 'Recorded a review',
      'review.corrected': 'Corrected a review (new version)',
      'review.superseded': 'A review version was replaced by a correction',
      'review.import_checked': 'Checked a review import file',
      'review.imported': 'Imported past reviews and visits',
    },
  },
  {
    prefix: 'film.',
    label: 'Films',
    actions: {
      'film.list': 'Viewed a case’s films',
      'film.uploaded': 'Uploaded a film',
      'film.upload_repeated': 'Uploaded a film already stored (no copy kept)',
      'film.viewed': 'Viewed a film',
      'film.calibrated': 'Calibrated a film (mm per pixel)',
      'film.measured': 'Measured the lesion on a film',
    },
  },
  {
    prefix: 'storage.',
    label: 'Stored files',
    actions: {
      'storage.swept': 'The storage sweep removed files or records left by an interrupted upload or export',
    },
  },
  {
    prefix: 'cohort.',
    label: 'Research cohorts',
    actions: {
      'cohort.created': 'Created a research cohort',
      'cohort.read': 'Opened a research cohort',
      'cohort.counts_read': 'Counted a cohort’s consenting cases',
      'cohort.version_saved': 'Saved a version of a research cohort',
      'cohort.export_requested': 'Asked for an anonymised export',
      'cohort.exported': 'An anonymised export was written',
      'cohort.export_failed': 'An anonymised export failed',
      'cohort.export_cancelled': 'Cancelled an anonymised export',
      'cohort.downloaded': 'Downloaded an anonymised export',
    },
  },
  {
    prefix: 'reading.',
    label: 'Film readings',
    actions: {
      'reading.queue_read': 'Viewed the reading queue',
      'reading.blinded_viewed': 'Opened a film for a blinded reading',
      'reading.recorded': 'Recorded a film reading',
      'reading.agreed': 'A film’s readings reached an agreed score',
      'reading.reference_set': 'Put a film in the reference set (or changed its reference score)',
      'reading.reference_removed': 'Took a film out of the reference set',
      'reading.agreement_read': 'Viewed reader agreement and calibration',
    },
  },
  {
    prefix: 'referrer.',
    label: 'Referring dentists',
    actions: {
      'referrer.link_sent': 'Sent a referrer an upload link for a visit',
      'referrer.link_opened': 'A referrer opened an upload link',
      'referrer.upload_received': 'A referrer uploaded films through a link',
      'referrer.upload_refused': 'Refused an upload through a used or expired link',
      'referrer.letter_requested': 'Sent the outcome letter of a review to the referrer',
      'referrer.letter_repeated': 'Asked again for an outcome letter already sent (nothing new sent)',
      'referrer.mail_sent': 'An e-mail to a referrer was delivered to the mail relay',
      'referrer.mail_failed': 'An e-mail to a referrer could not be delivered',
    },
  },
  {
    prefix: 'visit.',
    label: 'Recall visits',
    actions: {
      'visit.list': 'Viewed a case’s recall visits',
      'visit.updated': 'Changed a recall visit',
      'visit.marked_missed': 'Visit marked missed',
      'visit.closed_lost': 'Closed as lost to follow-up',
    },
  },
  {
    prefix: 'recall.',
    label: 'Recall desk',
    actions: {
      'recall.queues_read': 'Opened the recall desk',
      'recall.rows_read': 'Viewed a recall desk queue',
      'recall.rate_read': 'Viewed the follow-up rate',
      'recall.contact_log_read': 'Read a contact log',
      'recall.call_list_read': 'Opened the call list',
      'recall.call_noted': 'Noted a phone call',
      'recall.send_now': 'Sent reminders now',
      'recall.booked': 'Booked recall visits',
      'recall.marked': 'Changed the status of recall visits',
      'recall.reply': 'Patient answered a recall message',
      'recall.reminder_failed': 'A reminder could not be sent',
      'recall.policy_updated': 'Changed the recall policy',
    },
  },
  {
    prefix: 'outcomes.',
    label: 'Outcomes',
    actions: {
      'outcomes.overview_read': 'Viewed the outcomes overview',
      'outcomes.factor_read': 'Viewed outcomes by factor',
      'outcomes.curves_read': 'Viewed survival curves',
      'outcomes.model_read': 'Viewed the multivariable models of outcomes',
      'outcomes.exported': 'Downloaded outcome figures (CSV)',
      'outcomes.funnel_read': 'Viewed the clinician audit (funnel plot)',
      'outcomes.report_downloaded': 'Downloaded the outcomes audit report (PDF)',
      'outcomes.worklist_read': 'Viewed the non-healing worklist',
      'outcomes.worklist_exported': 'Downloaded the non-healing worklist (CSV)',
      'outcomes.decision_recorded': 'Recorded the next step for a case',
      'outcomes.decisions_read': 'Read the next steps recorded for a case',
    },
  },
  {
    prefix: 'practice.',
    label: 'Practice settings',
    actions: {
      'practice.settings_changed': 'Changed the practice settings',
    },
  },
  {
    prefix: 'referrer.',
    label: 'Referring dentists',
    actions: {
      'referrer.created': 'Added a referring dentist',
      'referrer.updated': 'Changed a referring dentist (name, practice, e-mail or archived)',
    },
  },
  {
    prefix: 'import.',
    label: 'Import files',
    actions: {
      'import.file_read': 'Read the columns of an import file',
      'import.mapping_saved': 'Saved the column mapping of an import file',
    },
  },
  {
    prefix: 'audit.',
    label: 'Audit trail',
    actions: {
      'audit.read': 'Viewed the audit trail',
      'audit.exported': 'Exported the audit trail',
    },
  },
  {
    prefix: 'mailbox.',
    label: 'Demo mailbox',
    actions: {
      'mailbox.list': 'Opened the demo mailbox',
      'mailbox.read': 'Read a message in the demo mailbox',
    },
  },
];

const ACTION_WORDS: Record<string, string> = Object.assign({}, ...ACTION_GROUPS.map((g) => g.actions));

/** The action in plain words; an unknown code reads as its own words ("review.archived" → "Review archived"). */
export function actionWords(code: string): string {
  const known = ACTION_WORDS[code];
  if (known) return known;
  const words = code.replace(/[._]+/g, ' ').trim();
  return words ? words[0].toUpperCase() + words.slice(1) : code;
}

export function isKnownAction(code: string): boolean {
  return code in ACTION_WORDS;
}

/** The kinds of record an event can name (its entity type), in words. */
export const RECORD_KINDS = {
  patient: 'Patient',
  case: 'Case',
  visit: 'Recall visit',
  review: 'Review',
  user: 'Team member',
  practice: 'Practice',
  referrer: 'Referring dentist',
  import_mapping: 'Import column mapping',
  cohort: 'Research cohort',
  cohort_export: 'Research export',
} as const;
export type RecordKind = keyof typeof RECORD_KINDS;
export const RECORD_KIND_VALUES = Object.keys(RECORD_KINDS) as [RecordKind, ...RecordKind[]];

export function recordKindWords(kind: string): string {
  return (RECORD_KINDS as Record<string, string>)[kind] ?? kind;
}

/** A short reference to a record: the first 8 characters of its id, enough to find it again. */
export function shortRef(id: string): string {
  return id.slice(0, 8);
}

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** "visitIds" → "visits", "changedVisitIds" → "changed visits", "ids" → "records". */
function nounOf(key: string): string {
  const base = key.replace(/Ids$/, 's').replace(/^ids$/, 'records');
  return base.replace(/([a-z])([A-Z])/g, '$1 $2').toLowerCase();
}

function keyWords(key: string): string {
  return key
    .replace(/Id$/, '')
    .replace(/([a-z])([A-Z])/g, '$1 $2')
    .toLowerCase();
}

function valueWords(v: unknown): string | null {
  if (v === null || v === undefined || v === '') return null;
  if (typeof v === 'boolean') return v ? 'yes' : 'no';
  if (typeof v === 'number') return String(v);
  if (typeof v === 'string') return UUID.test(v) ? shortRef(v) : v.length > 60 ? `${v.slice(0, 57)}…` : v;
  return null;
}

/**
 * The event's detail in one short line: counts instead of lists of ids ("12 visits"), record ids as
 * short references, lists of words joined ("fields: phone, email"). Never a wall of ids.
 */
export function detailWords(detail: Record<string, unknown> | null | undefined): string {
  if (!detail) return '';
  const parts: string[] = [];
  for (const [key, v] of Object.entries(detail)) {
    if (Array.isArray(v)) {
      const words = v.every((x) => typeof x === 'string' && !UUID.test(x));
      if (words && v.length > 0 && v.length <= 8) parts.push(`${keyWords(key)}: ${v.join(', ')}`);
      else parts.push(`${v.length} ${nounOf(key)}`);
      continue;
    }
    if (v && typeof v === 'object') {
      const n = Object.keys(v).length;
      if (n) parts.push(`${keyWords(key)}: ${n} ${n === 1 ? 'entry' : 'entries'}`);
      continue;
    }
    const w = valueWords(v);
    if (w !== null) parts.push(`${keyWords(key)}: ${w}`);
  }
  return parts.join(' · ');
}
