import { createElement } from 'react';
import { describe, expect, it } from 'vitest';
import { renderTemplate } from '@/lib/mail/mailer';
import { ReminderEmail, dueMonth, listUnsubscribeHeaders, reminderSubject, type ReminderEmailProps } from '@/lib/mail/templates/ReminderEmail';
import { MESSAGE_WORDINGS } from '@/lib/recall/wording';

const token = 'eyJ2IjoxfQ.c2lnbmF0dXJlLW9mLTQzLWNoYXJhY3RlcnMtZm9yLXRoZS10ZXN0';
const props = (over: Partial<ReminderEmailProps> = {}): ReminderEmailProps => ({
  wording: 'invitation',
  firstName: 'Anna',
  practiceName: 'Harbour Endodontics',
  dueDate: '2026-03-15',
  links: {
    confirm: `https://lamina.example.org/reply/${token}?answer=confirm`,
    reschedule: `https://lamina.example.org/reply/${token}?answer=reschedule`,
    decline: `https://lamina.example.org/reply/${token}?answer=decline`,
    unsubscribe: `https://lamina.example.org/unsubscribe/${token}`,
  },
  contact: { phone: '+44 20 7946 0000', email: 'desk@harbour.example.org', address: '1 Quay Street, Harbourtown' },
  ...over,
});

const render = (p: ReminderEmailProps) => renderTemplate(createElement(ReminderEmail, p));
/** The hrefs of the HTML part, entity-decoded. */
const hrefs = (html: string) => [...html.matchAll(/href="([^"]*)"/g)].map((m) => m[1]!.replace(/&amp;/g, '&'));

describe.each(MESSAGE_WORDINGS)('ReminderEmail, wording %s', (wording) => {
  it('has the links in the HTML and in the plain text', async () => {
    const p = props({ wording });
    const { html, text } = await render(p);
    for (const url of Object.values(p.links)) {
      expect(hrefs(html)).toContain(url);
      expect(text).toContain(url);
    }
  });

  it('greets by first name, names the practice and the due month, and says why the review matters', async () => {
    const { html, text } = await render(props({ wording }));
    // React separates adjacent text nodes with empty comments in the HTML.
    for (const part of [text, html.replace(/<!-- -->/g, '')]) {
      expect(part).toContain('Dear Anna,');
      expect(part).toContain('Harbour Endodontics');
      // A proposal names the proposed time instead of the month.
      if (wording !== 'proposal') expect(part).toContain('March 2026');
      expect(part).toMatch(/bone around the tip of the root has healed/);
    }
    expect(text).toMatch(/Questions\? Please call \+44 20 7946 0000 or write to desk@harbour\.example\.org\. Harbour Endodontics, 1 Quay Street, Harbourtown\./);
    expect(text).toMatch(/unsubscribe here/);
  });

  it('carries no clinical detail', async () => {
    const { html, text } = await render(props({ wording }));
    const all = `${text}\n${html}\n${reminderSubject(wording, 'Harbour Endodontics', '2026-03-15')}`.toLowerCase();
    for (const word of ['diagnos', 'lesion', 'abscess', 'periapical', 'periodontitis', 'infection', 'pain', 'canal', 'fdi', 'tooth 3', 'retreat', 'fail']) {
      expect(all).not.toContain(word);
    }
  });
});

describe('ReminderEmail wording per step', () => {
  it.each([
    ['invitation', /It is nearly time for your follow-up review at Harbour Endodontics: it is due in March 2026\./],
    ['second_invitation', /We have not heard from you yet/],
    ['last_notice', /was due in March 2026[\s\S]*This is the last reminder we will send about this review\./],
    ['invitation_early', /Your next follow-up review at Harbour Endodontics is due in March 2026\.[\s\S]*We are writing early/],
    ['invitation_overdue', /was due in March 2026, and we would like to arrange it with you\.[\s\S]*It is not too late to come\./],
    ['second_invitation_overdue', /which was due in March 2026\.[\s\S]*We have not heard from you yet/],
    ['proposal', /We would like to offer you a time for your follow-up review at Harbour Endodontics\./],
  ] as const)('%s', async (wording, pattern) => {
    expect((await render(props({ wording }))).text).toMatch(pattern);
  });

  it('only the invitation due soon says "nearly time"; no wording but the second invitation says "not heard from you"', async () => {
    for (const wording of MESSAGE_WORDINGS) {
      const { text } = await render(props({ wording }));
      expect(text.includes('nearly time'), wording).toBe(wording === 'invitation');
      expect(text.includes('not heard from you'), wording).toBe(wording.startsWith('second_invitation'));
    }
  });

  it('offers a proposed time with the calendar file, and says "Confirm this time"', async () => {
    const { text } = await render(props({ wording: 'proposal', appointment: 'Tuesday 3 March 2026 at 09:30' }));
    expect(text).toContain('We have set aside a time for you: Tuesday 3 March 2026 at 09:30');
    expect(text).toContain('A calendar file is attached');
    expect(text).toContain(`Confirm this time ${props().links.confirm}`);
  });

  it('without a time, the confirm button asks to come', async () => {
    const { text } = await render(props());
    expect(text).toContain(`Yes, I would like to come ${props().links.confirm}`);
    expect(text).not.toContain('set aside');
  });

  it('shows each link once in the plain text (the HTML-only fallback line is skipped)', async () => {
    const { text } = await render(props());
    for (const url of Object.values(props().links)) expect(text.split(url).length - 1).toBe(1);
  });

  it('works without contact details', async () => {
    const { text } = await render(props({ contact: {} }));
    expect(text).toContain('Questions? Please contact the practice. Harbour Endodontics.');
  });

  it('escapes what it is given', async () => {
    const { html } = await render(props({ firstName: '<b>Ann</b>' }));
    expect(html).toContain('&lt;b&gt;Ann&lt;/b&gt;');
  });
});

describe('subjects and months', () => {
  it.each([
    ['invitation', 'Your follow-up review at Harbour Endodontics is due in March 2026'],
    ['second_invitation', 'Reminder: your follow-up review at Harbour Endodontics'],
    ['last_notice', 'Last reminder: your follow-up review at Harbour Endodontics'],
    ['invitation_early', 'Your follow-up review at Harbour Endodontics is due in March 2026'],
    ['invitation_overdue', 'Time to arrange your follow-up review at Harbour Endodontics'],
    ['proposal', 'A time for your follow-up review at Harbour Endodontics'],
  ] as const)('%s: %s', (wording, subject) => {
    expect(reminderSubject(wording, 'Harbour Endodontics', '2026-03-15')).toBe(subject);
  });

  it.each([
    ['2024-02-29', 'February 2024'],
    ['2025-12-31', 'December 2025'],
    ['2026-01-01', 'January 2026'],
  ])('due %s → %s', (date, month) => {
    expect(dueMonth(date)).toBe(month);
  });
});

describe('listUnsubscribeHeaders (RFC 8058, RFC 2369)', () => {
  it('gives the one-click pair with the https URL in angle brackets', () => {
    expect(listUnsubscribeHeaders('https://lamina.example.org/unsubscribe/abc.def')).toEqual({
      'List-Unsubscribe': '<https://lamina.example.org/unsubscribe/abc.def>',
      'List-Unsubscribe-Post': 'List-Unsubscribe=One-Click', // RFC 8058 §3.1: exactly this
    });
  });

  it('adds a mailto URI after the https one, comma-separated (RFC 2369 §3.2)', () => {
    expect(listUnsubscribeHeaders('https://lamina.example.org/u/x', 'unsubscribe@harbour.example.org')['List-Unsubscribe']).toBe(
      '<https://lamina.example.org/u/x>, <mailto:unsubscribe@harbour.example.org?subject=unsubscribe>',
    );
    expect(listUnsubscribeHeaders('https://lamina.example.org/u/x', 'mailto:u@h.example.org')['List-Unsubscribe']).toBe(
      '<https://lamina.example.org/u/x>, <mailto:u@h.example.org>',
    );
  });

  it('wants https (RFC 8058 §3.1), allowing http for local development hosts only', () => {
    expect(() => listUnsubscribeHeaders('http://lamina.example.org/u/x')).toThrow(/https/);
    expect(listUnsubscribeHeaders('http://127.0.0.1:3000/u/x')['List-Unsubscribe']).toBe('<http://127.0.0.1:3000/u/x>');
    expect(listUnsubscribeHeaders('http://lamina.test/u/x')['List-Unsubscribe']).toBe('<http://lamina.test/u/x>');
    expect(() => listUnsubscribeHeaders('ftp://lamina.example.org/u/x')).toThrow(RangeError);
    expect(() => listUnsubscribeHeaders('not a url')).toThrow(RangeError);
  });

  it('refuses a mailto that could break the header', () => {
    expect(() => listUnsubscribeHeaders('https://lamina.example.org/u/x', 'a@b>, <https://evil.example')).toThrow(RangeError);
    expect(() => listUnsubscribeHeaders('https://lamina.example.org/u/x', 'a@b\r\nBcc: x@y')).toThrow(RangeError);
    expect(() => listUnsubscribeHeaders('https://lamina.example.org/u/x', 'nobody')).toThrow(RangeError);
  });

  it('percent-encodes what the URL parser would (no raw spaces or brackets reach the header)', () => {
    expect(listUnsubscribeHeaders('https://lamina.example.org/u/a b<c>')['List-Unsubscribe']).toBe('<https://lamina.example.org/u/a%20b%3Cc%3E>');
  });
});
