import { Button, Link, Section, Text } from '@react-email/components';
import { format } from 'date-fns';
import { toLocalNoon, type CalendarDate } from '@/lib/registry/calendar-date';
import type { MessageWording } from '@/lib/recall/wording';
import { Frame, buttonStyle } from './Frame';

/**
 * The recall reminder: one template for every step (invitation, proposal, second invitation, last
 * notice) in the wording lib/recall/wording.ts `messageWording` chose, rendered to HTML and plain
 * text by lib/mail/mailer.ts `renderTemplate`. Every message names the practice's address, phone
 * and e-mail when the practice has given them (practice settings).
 *
 * Privacy: patient data is health data, and e-mail is read on shared screens and lock screens.
 * The message says only that a follow-up review is due at the practice, in which month, and why
 * reviews matter in general. No tooth, no diagnosis, no findings, no treatment detail — in the
 * subject, the preview, the body or the links (which carry only an opaque signed token).
 *
 * The reply links should open a page that asks the patient to press a button (a POST): mail
 * scanners follow links in messages, so a GET must never change a visit by itself.
 */

export interface ReminderLinks {
  /** Yes, I will come (or: please book me). */
  confirm: string;
  /** Please offer another time. */
  reschedule: string;
  /** No further follow-up, thank you. */
  decline: string;
  /** Stop recall e-mails (withdraws the recall-contact consent). */
  unsubscribe: string;
}

export interface PracticeContactLine {
  phone?: string;
  email?: string;
  address?: string;
}

export interface ReminderEmailProps {
  /** lib/recall/wording.ts messageWording: the step, and for the invitation whether early, due or overdue. */
  wording: MessageWording;
  firstName: string;
  practiceName: string;
  /** The visit's due date; only its month and year are shown. */
  dueDate: CalendarDate;
  links: ReminderLinks;
  contact: PracticeContactLine;
  /** A proposed time, already written in the practice's time zone ("Tuesday 3 March 2026 at 09:30"); a calendar file goes with it. */
  appointment?: string;
}

/** "March 2026" for a due date in March 2026. */
export function dueMonth(dueDate: CalendarDate): string {
  return format(toLocalNoon(dueDate), 'MMMM yyyy');
}

/** The subject line for each wording: the practice and the review, nothing clinical. */
export function reminderSubject(wording: MessageWording, practiceName: string, dueDate: CalendarDate): string {
  switch (wording) {
    case 'invitation':
    case 'invitation_early':
      return `Your follow-up review at ${practiceName} is due in ${dueMonth(dueDate)}`;
    case 'invitation_overdue':
      return `Time to arrange your follow-up review at ${practiceName}`;
    case 'proposal':
      return `A time for your follow-up review at ${practiceName}`;
    case 'second_invitation':
    case 'second_invitation_overdue':
      return `Reminder: your follow-up review at ${practiceName}`;
    case 'last_notice':
      return `Last reminder: your follow-up review at ${practiceName}`;
  }
}

function opening(wording: MessageWording, practiceName: string, month: string): string[] {
  switch (wording) {
    case 'invitation_early':
      return [
        `Your next follow-up review at ${practiceName} is due in ${month}.`,
        'We are writing early so that you can plan it in good time.',
      ];
    case 'invitation':
      return [`It is nearly time for your follow-up review at ${practiceName}: it is due in ${month}.`];
    case 'invitation_overdue':
      return [
        `Your follow-up review at ${practiceName} was due in ${month}, and we would like to arrange it with you.`,
        'It is not too late to come.',
      ];
    case 'proposal':
      return [`We would like to offer you a time for your follow-up review at ${practiceName}.`];
    case 'second_invitation':
      return [
        `We wrote to you recently about your follow-up review at ${practiceName}, due in ${month}.`,
        'We have not heard from you yet, so here is a short reminder.',
      ];
    case 'second_invitation_overdue':
      return [
        `We wrote to you recently about your follow-up review at ${practiceName}, which was due in ${month}.`,
        'We have not heard from you yet, so here is a short reminder.',
      ];
    case 'last_notice':
      return [
        `Your follow-up review at ${practiceName} was due in ${month}, and we have not been able to arrange it yet.`,
        'It is not too late to come. This is the last reminder we will send about this review.',
      ];
  }
}

const WHY =
  'Why it matters: a treated tooth often feels fine whether or not it has fully healed. At the review we take a ' +
  'small X-ray film, which shows whether the bone around the tip of the root has healed. It takes only a few ' +
  'minutes and tells us whether the treatment has done its job.';

const small = { fontSize: 13, color: '#5b6166' } as const;
const secondaryButton = { ...buttonStyle, backgroundColor: '#ffffff', color: '#3a3470', border: '1px solid #3a3470' } as const;

export function ReminderEmail(props: ReminderEmailProps) {
  const month = dueMonth(props.dueDate);
  const contactParts = [
    props.contact.phone ? `call ${props.contact.phone}` : null,
    props.contact.email ? `write to ${props.contact.email}` : null,
  ].filter((x): x is string => x !== null);
  const confirmLabel = props.appointment ? 'Confirm this time' : 'Yes, I would like to come';

  return (
    <Frame
      preview={reminderSubject(props.wording, props.practiceName, props.dueDate)}
      footer={
        <>
          You receive this message because you agreed that {props.practiceName} may contact you about follow-up
          reviews. To stop these e-mails, unsubscribe here: <Link href={props.links.unsubscribe}>{props.links.unsubscribe}</Link>
        </>
      }
    >
      <Text>Dear {props.firstName},</Text>
      {opening(props.wording, props.practiceName, month).map((line) => (
        <Text key={line}>{line}</Text>
      ))}
      {props.appointment ? (
        <Text>
          We have set aside a time for you: <strong>{props.appointment}</strong>. A calendar file is attached so you can
          add it to your calendar.
        </Text>
      ) : null}
      <Text>{WHY}</Text>
      <Text>Please let us know with one of these links:</Text>
      <Section>
        <Button href={props.links.confirm} style={buttonStyle}>
          {confirmLabel}
        </Button>
      </Section>
      <Section style={{ marginTop: 10 }}>
        <Button href={props.links.reschedule} style={secondaryButton}>
          Ask for another time
        </Button>
      </Section>
      <Section style={{ marginTop: 10 }}>
        <Button href={props.links.decline} style={secondaryButton}>
          No further follow-up, thank you
        </Button>
      </Section>
      {/* The plain-text part already shows each button as its label and address. */}
      <Text style={small} data-skip-in-text="true">
        If the buttons do not work, paste one of these addresses into your browser. To confirm: {props.links.confirm} — for
        another time: {props.links.reschedule} — for no further follow-up: {props.links.decline}
      </Text>
      <Text style={small}>
        {contactParts.length ? `Questions? Please ${contactParts.join(' or ')}.` : 'Questions? Please contact the practice.'}
        {props.contact.address ? ` ${props.practiceName}, ${props.contact.address}.` : ` ${props.practiceName}.`}
      </Text>
      <Text style={small}>With kind regards, the team at {props.practiceName}</Text>
    </Frame>
  );
}

const LOCAL_HOST = /^(localhost|127\.\d+\.\d+\.\d+|\[::1\]|.+\.(test|invalid|localhost))$/i;

/**
 * The List-Unsubscribe headers of a reminder (RFC 2369 §3.2, one-click per RFC 8058):
 *   List-Unsubscribe: <https://…>[, <mailto:…>]
 *   List-Unsubscribe-Post: List-Unsubscribe=One-Click
 * RFC 8058 §3.1 wants an HTTPS URI: plain http is accepted only for local hosts (development and
 * tests). The URL receives a POST with the body "List-Unsubscribe=One-Click" and no cookies; it
 * must unsubscribe without further questions. RFC 8058 §4 also wants a DKIM signature covering
 * both headers — that is the sending relay's job.
 */
export function listUnsubscribeHeaders(url: string, mailto?: string): Record<'List-Unsubscribe' | 'List-Unsubscribe-Post', string> {
  let parsed: URL;
  try {
    parsed = new URL(url);
  } catch {
    throw new RangeError(`Not a URL for List-Unsubscribe: ${url}`);
  }
  const local = LOCAL_HOST.test(parsed.hostname);
  if (parsed.protocol !== 'https:' && !(parsed.protocol === 'http:' && local)) {
    throw new RangeError('List-Unsubscribe needs an https URL (RFC 8058 §3.1); http is allowed for local hosts only.');
  }
  const uris = [parsed.href];
  if (mailto !== undefined) {
    const m = mailto.startsWith('mailto:') ? mailto : `mailto:${mailto}?subject=unsubscribe`;
    if (!/^mailto:[^\s<>@,]+@[^\s<>,]+$/.test(m)) throw new RangeError(`Not a mailto address for List-Unsubscribe: ${mailto}`);
    uris.push(m);
  }
  if (uris.some((u) => /[\s<>]/.test(u))) throw new RangeError('List-Unsubscribe URIs may not contain spaces or angle brackets.');
  return {
    'List-Unsubscribe': uris.map((u) => `<${u}>`).join(', '),
    'List-Unsubscribe-Post': 'List-Unsubscribe=One-Click',
  };
}
