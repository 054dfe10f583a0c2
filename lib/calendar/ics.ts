/**
 * An iCalendar file (RFC 5545) for a proposed or booked follow-up review, attached to a
 * reminder so the patient can put it in their calendar. Built with the `ics` package, then
 * re-folded by octets (the package folds by characters, which lets lines with accented letters
 * exceed 75 octets).
 *
 * Choices:
 * - METHOD:PUBLISH (RFC 5546 §3.2.1), not REQUEST. REQUEST is an iTIP scheduling request: it
 *   needs the patient as ATTENDEE and makes calendar programs offer Accept/Decline buttons that
 *   send an iTIP REPLY by e-mail to the organizer. Lamina does not read such replies — patients
 *   answer through the signed link — so a button that seems to answer but does nothing would
 *   mislead. PUBLISH simply offers the event to add; it carries ORGANIZER and no ATTENDEE,
 *   as §3.2.1 requires, and the patient's address does not appear in the file.
 * - Times in UTC (RFC 5545 §3.3.5, form 2), so no VTIMEZONE is needed and every program shows
 *   the right local time; the e-mail states the time in the practice's zone.
 * - UID (RFC 5545 §3.8.4.7) stable for one visit and proposal: the same proposal sent again
 *   updates the calendar entry instead of adding a second. It is a hash of the two ids written as
 *   a UUID, which keeps internal ids out of the file (RFC 7986 §5.3 advises against UIDs that
 *   reveal anything).
 * - STATUS:TENTATIVE while proposed, CONFIRMED once booked (§3.8.1.11); CLASS:PRIVATE (§3.8.1.3)
 *   so a shared calendar shows the slot as busy, not its title.
 * - Words: "Follow-up review" and the practice's name and address only — no tooth, no
 *   diagnosis, no treatment detail (patient data is health data).
 */
import { createHash } from 'node:crypto';
import { createEvent, type EventAttributes } from 'ics';

export const ICS_METHOD = 'PUBLISH';
export const ICS_PRODUCT_ID = '-//Lamina//Recall desk//EN';
/** MIME type of the attachment; the method parameter matches METHOD (RFC 6047 §2.4). */
export const ICS_CONTENT_TYPE = `text/calendar; charset=utf-8; method=${ICS_METHOD}`;
export const ICS_FILENAME = 'follow-up-review.ics';
/** RFC 5545 §3.1: lines SHOULD NOT be longer than 75 octets, excluding the line break. */
export const ICS_MAX_LINE_OCTETS = 75;

export interface PracticeContact {
  name: string;
  /** Shown as LOCATION; the practice name is used when absent. */
  address?: string;
  /** ORGANIZER's address (RFC 5546 §3.2.1 requires an ORGANIZER for PUBLISH). */
  email: string;
  phone?: string;
}

export interface AppointmentProposal {
  visitId: string;
  /** Stable per proposed time (the proposal's row id, or a counter). */
  proposalId: string;
  start: Date;
  durationMinutes?: number;
  practice: PracticeContact;
  /** DTSTAMP: when this file is made (passed in: nothing here reads the clock). */
  stamp: Date;
  /** Raise it when the same proposal is changed and sent again (§3.8.7.4). */
  sequence?: number;
  status?: 'proposed' | 'booked';
}

export const DEFAULT_REVIEW_MINUTES = 30;

/** The UID of one visit's proposal: a UUID (RFC 9562 version 8) made from a SHA-256 of both ids. */
export function appointmentUid(visitId: string, proposalId: string): string {
  const h = createHash('sha256').update('lamina-appointment\u0000').update(visitId).update('\u0000').update(proposalId).digest();
  h[6] = (h[6]! & 0x0f) | 0x80; // version 8
  h[8] = (h[8]! & 0x3f) | 0x80; // variant 10
  const hex = h.subarray(0, 16).toString('hex');
  return `${hex.slice(0, 8)}-${hex.slice(8, 12)}-${hex.slice(12, 16)}-${hex.slice(16, 20)}-${hex.slice(20, 32)}`;
}

/**
 * Re-folds iCalendar text so that no line exceeds 75 octets (RFC 5545 §3.1): unfolds first
 * (CRLF followed by one space or tab), then breaks each long line before the character that would
 * cross the limit — never inside a UTF-8 sequence — continuing with CRLF and one space.
 */
export function foldIcs(text: string): string {
  const lines = text.replace(/\r\n[ \t]/g, '').split('\r\n');
  if (lines[lines.length - 1] === '') lines.pop();
  return lines.map(foldLine).join('\r\n') + '\r\n';
}

function foldLine(line: string): string {
  if (Buffer.byteLength(line, 'utf8') <= ICS_MAX_LINE_OCTETS) return line;
  const out: string[] = [];
  let current = '';
  let octets = 0;
  for (const ch of line) {
    const n = Buffer.byteLength(ch, 'utf8');
    if (octets + n > ICS_MAX_LINE_OCTETS) {
      out.push(current);
      current = ' ';
      octets = 1;
    }
    current += ch;
    octets += n;
  }
  out.push(current);
  return out.join('\r\n');
}

/** Double quotes cannot appear in a parameter value (RFC 5545 §3.2); control characters nowhere. */
function paramSafe(value: string): string {
  return value.replace(/["\u0000-\u001f\u007f]/g, '').trim();
}

function textSafe(value: string): string {
  return value.replace(/[\u0000-\u0008\u000b-\u001f\u007f]/g, '').trim();
}

/** The words of the event, in Lamina's voice and without clinical detail. */
export function appointmentWords(practice: PracticeContact, status: 'proposed' | 'booked') {
  const name = textSafe(practice.name);
  const phone = practice.phone ? ` or call ${textSafe(practice.phone)}` : '';
  return {
    title: `Follow-up review at ${name}`,
    description:
      status === 'proposed'
        ? `A proposed time for your follow-up review at ${name}. Please confirm it or ask for another time with the links in the e-mail${phone}.`
        : `Your follow-up review at ${name}. If you cannot come, please use the links in the e-mail${phone}.`,
    location: textSafe(practice.address ?? practice.name),
  };
}

/** The .ics text for one appointment; throws on input the calendar format cannot hold. */
export function appointmentIcs(p: AppointmentProposal): string {
  const minutes = p.durationMinutes ?? DEFAULT_REVIEW_MINUTES;
  if (!Number.isInteger(minutes) || minutes < 5 || minutes > 480) throw new RangeError('An appointment lasts 5 to 480 whole minutes.');
  if (Number.isNaN(p.start.getTime()) || Number.isNaN(p.stamp.getTime())) throw new RangeError('The appointment needs a valid start and stamp.');
  const status = p.status ?? 'proposed';
  const words = appointmentWords(p.practice, status);
  // `timestamp` (DTSTAMP) is read by the package but missing from its types.
  const attributes: EventAttributes & { timestamp: number } = {
    productId: ICS_PRODUCT_ID,
    method: ICS_METHOD,
    uid: appointmentUid(p.visitId, p.proposalId),
    timestamp: p.stamp.getTime(),
    start: p.start.getTime(),
    startInputType: 'utc',
    startOutputType: 'utc',
    end: p.start.getTime() + minutes * 60_000,
    endInputType: 'utc',
    endOutputType: 'utc',
    title: words.title,
    description: words.description,
    location: words.location,
    status: status === 'proposed' ? 'TENTATIVE' : 'CONFIRMED',
    classification: 'PRIVATE',
    transp: 'OPAQUE',
    organizer: { name: paramSafe(p.practice.name), email: p.practice.email },
    ...(p.sequence !== undefined ? { sequence: p.sequence } : {}),
  };
  const { error, value } = createEvent(attributes);
  if (error || !value) throw new Error(`Could not build the calendar file: ${error?.message ?? 'no output'}`);
  return foldIcs(value);
}

/** The attachment for lib/mail/mailer.ts `sendMail`. */
export function appointmentAttachment(p: AppointmentProposal): { filename: string; content: string; contentType: string } {
  return { filename: ICS_FILENAME, content: appointmentIcs(p), contentType: ICS_CONTENT_TYPE };
}
