import { describe, expect, it } from 'vitest';
import {
  ICS_CONTENT_TYPE,
  ICS_MAX_LINE_OCTETS,
  appointmentAttachment,
  appointmentIcs,
  appointmentUid,
  foldIcs,
  type AppointmentProposal,
} from '@/lib/calendar/ics';

const base: AppointmentProposal = {
  visitId: '3f2b8c1e-9a4d-4e7b-8c2a-1d5e6f7a8b9c',
  proposalId: 'p-1',
  start: new Date('2026-03-03T09:30:00Z'),
  stamp: new Date('2026-02-01T08:00:00Z'),
  practice: { name: 'Harbour Endodontics', address: '1 Quay Street, Harbourtown', email: 'desk@harbour.test', phone: '+44 20 7946 0000' },
};
// A name and address that need escaping and multi-octet characters, long enough to be folded.
const accented: AppointmentProposal = {
  ...base,
  practice: {
    name: 'Clinique dentaire Sainte-Éloïse; endodontie, spécialistes — « Ville » 🦷',
    address: 'Rue de l’Église 12, 1000 Ville; 2e étage, porte à droite après l’ascenseur',
    email: 'desk@eloise.test',
  },
};

interface ContentLine {
  name: string;
  params: Record<string, string>;
  value: string;
}

/** RFC 5545 §3.1: unfold (CRLF + one space or tab), then split name *(";" param) ":" value. */
function parse(text: string): ContentLine[] {
  const unfolded = text.replace(/\r\n[ \t]/g, '');
  return unfolded
    .split('\r\n')
    .filter((l) => l !== '')
    .map((line) => {
      let i = 0;
      let inQuote = false;
      for (; i < line.length; i++) {
        if (line[i] === '"') inQuote = !inQuote;
        if (line[i] === ':' && !inQuote) break;
      }
      // Parameters are separated by ';' outside double quotes (§3.2: quoted values may hold ; : ,).
      const head = line.slice(0, i).match(/(?:[^;"]|"[^"]*")+/g) ?? [];
      const [name, ...params] = head;
      return {
        name: name!,
        params: Object.fromEntries(params.map((p) => [p.slice(0, p.indexOf('=')), p.slice(p.indexOf('=') + 1)])),
        value: line.slice(i + 1),
      };
    });
}

/** RFC 5545 §3.3.11: TEXT unescaping. */
const unescapeText = (v: string) => v.replace(/\\([\\;,nN])/g, (_m, c: string) => (c === 'n' || c === 'N' ? '\n' : c));

const props = (lines: ContentLine[], name: string) => lines.filter((l) => l.name === name);
const one = (lines: ContentLine[], name: string) => {
  const found = props(lines, name);
  expect(found, name).toHaveLength(1);
  return found[0]!;
};

describe.each([
  ['plain', base],
  ['accented and long', accented],
])('appointmentIcs (%s) against RFC 5545', (_label, proposal) => {
  const ics = appointmentIcs(proposal);
  const lines = parse(ics);

  it('§3.1: every line ends with CRLF, no bare CR or LF', () => {
    expect(ics.endsWith('\r\n')).toBe(true);
    expect(ics.replace(/\r\n/g, '')).not.toMatch(/[\r\n]/);
  });

  it('§3.1: no line is longer than 75 octets; continuation lines start with one space', () => {
    const physical = ics.split('\r\n').slice(0, -1);
    for (const line of physical) expect(Buffer.byteLength(line, 'utf8'), line).toBeLessThanOrEqual(ICS_MAX_LINE_OCTETS);
    // §3.1: folding must not split a multi-octet character (no lone surrogates, valid UTF-8 per line).
    for (const line of physical) {
      expect(line).not.toMatch(/[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/);
      expect(Buffer.from(line, 'utf8').toString('utf8')).toBe(line);
    }
  });

  it('§3.4 / §3.6: one VCALENDAR holding one VEVENT, properly nested', () => {
    const markers = lines.filter((l) => l.name === 'BEGIN' || l.name === 'END').map((l) => `${l.name}:${l.value}`);
    expect(markers).toEqual(['BEGIN:VCALENDAR', 'BEGIN:VEVENT', 'END:VEVENT', 'END:VCALENDAR']);
    expect(lines[0]).toMatchObject({ name: 'BEGIN', value: 'VCALENDAR' });
    expect(lines.at(-1)).toMatchObject({ name: 'END', value: 'VCALENDAR' });
  });

  it('§3.7.4 VERSION:2.0 and §3.7.3 PRODID, once each; §3.7.2 METHOD:PUBLISH', () => {
    expect(one(lines, 'VERSION').value).toBe('2.0');
    expect(one(lines, 'PRODID').value).toBe('-//Lamina//Recall desk//EN');
    expect(one(lines, 'METHOD').value).toBe('PUBLISH');
    expect(ICS_CONTENT_TYPE).toBe('text/calendar; charset=utf-8; method=PUBLISH'); // RFC 6047 §2.4: same method
  });

  it('§3.6.1: UID and DTSTAMP once; DTSTART; DTEND after it and no DURATION beside it', () => {
    expect(one(lines, 'UID').value).toBe(appointmentUid(proposal.visitId, proposal.proposalId));
    // §3.8.7.2: DTSTAMP in UTC; §3.3.5 form 2 (UTC time) for the start and end.
    expect(one(lines, 'DTSTAMP').value).toBe('20260201T080000Z');
    expect(one(lines, 'DTSTART').value).toBe('20260303T093000Z');
    expect(one(lines, 'DTEND').value).toBe('20260303T100000Z'); // 30 minutes by default
    expect(props(lines, 'DURATION')).toHaveLength(0);
    expect(one(lines, 'DTEND').value > one(lines, 'DTSTART').value).toBe(true);
  });

  it('RFC 5546 §3.2.1 (PUBLISH): ORGANIZER present, no ATTENDEE', () => {
    const organizer = one(lines, 'ORGANIZER');
    expect(organizer.value).toBe(`MAILTO:${proposal.practice.email}`);
    expect(organizer.params.CN).toMatch(/^".*"$/); // §3.2: quoted, as it may hold , ; :
    expect(props(lines, 'ATTENDEE')).toHaveLength(0);
  });

  it('§3.3.11: SUMMARY, DESCRIPTION and LOCATION escape , ; and \\ and read back as written', () => {
    const summary = unescapeText(one(lines, 'SUMMARY').value);
    expect(summary).toBe(`Follow-up review at ${proposal.practice.name}`);
    expect(unescapeText(one(lines, 'LOCATION').value)).toBe(proposal.practice.address);
    for (const name of ['SUMMARY', 'DESCRIPTION', 'LOCATION']) {
      expect(one(lines, name).value).not.toMatch(/(?<!\\)[;,]/);
    }
  });

  it('§3.8.1.11 STATUS:TENTATIVE while proposed; §3.8.1.3 CLASS:PRIVATE', () => {
    expect(one(lines, 'STATUS').value).toBe('TENTATIVE');
    expect(one(lines, 'CLASS').value).toBe('PRIVATE');
  });

  it('says nothing clinical: only "follow-up review", the practice and its contact', () => {
    const text = unescapeText(lines.map((l) => l.value).join('\n')).toLowerCase();
    for (const word of ['tooth', 'canal', 'diagnos', 'lesion', 'pain', 'abscess', 'periapical', 'x-ray', 'film']) {
      expect(text).not.toContain(word);
    }
    expect(text).toContain('follow-up review');
  });
});

describe('UID (RFC 5545 §3.8.4.7)', () => {
  it('is stable for one visit and proposal, whatever the time or stamp', () => {
    const a = appointmentIcs(base);
    const b = appointmentIcs({ ...base, stamp: new Date('2026-02-10T00:00:00Z'), start: new Date('2026-03-04T09:30:00Z'), sequence: 1 });
    expect(one(parse(a), 'UID').value).toBe(one(parse(b), 'UID').value);
  });

  it('differs by proposal and by visit, and is a UUID that reveals neither id (RFC 7986 §5.3)', () => {
    const uid = appointmentUid(base.visitId, 'p-1');
    expect(uid).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-8[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/);
    expect(appointmentUid(base.visitId, 'p-2')).not.toBe(uid);
    expect(appointmentUid('another-visit', 'p-1')).not.toBe(uid);
    expect(appointmentUid('ab', 'c')).not.toBe(appointmentUid('a', 'bc'));
    expect(uid).not.toContain(base.visitId.slice(0, 8));
  });

  it('is the same file for the same input (DTSTAMP comes from the input, not the clock)', () => {
    expect(appointmentIcs(base)).toBe(appointmentIcs(base));
  });
});

describe('appointment options', () => {
  it('§3.8.1.11 STATUS:CONFIRMED once booked; §3.8.7.4 SEQUENCE when given; custom length', () => {
    const lines = parse(appointmentIcs({ ...base, status: 'booked', sequence: 2, durationMinutes: 45 }));
    expect(one(lines, 'STATUS').value).toBe('CONFIRMED');
    expect(one(lines, 'SEQUENCE').value).toBe('2');
    expect(one(lines, 'DTEND').value).toBe('20260303T101500Z');
  });

  it('uses the practice name as LOCATION when there is no address, and drops quotes from CN (§3.2)', () => {
    const lines = parse(appointmentIcs({ ...base, practice: { name: 'The "Quay" Practice', email: 'q@quay.test' } }));
    expect(unescapeText(one(lines, 'LOCATION').value)).toBe('The "Quay" Practice');
    expect(one(lines, 'ORGANIZER').params.CN).toBe('"The Quay Practice"');
  });

  it.each([0, 4, 481, 2.5])('refuses a length of %s minutes', (durationMinutes) => {
    expect(() => appointmentIcs({ ...base, durationMinutes })).toThrow(RangeError);
  });

  it('refuses an invalid date', () => {
    expect(() => appointmentIcs({ ...base, start: new Date('nope') })).toThrow(RangeError);
  });

  it('gives a mail attachment', () => {
    expect(appointmentAttachment(base)).toEqual({ filename: 'follow-up-review.ics', content: appointmentIcs(base), contentType: ICS_CONTENT_TYPE });
  });
});

describe('foldIcs (RFC 5545 §3.1)', () => {
  it('leaves short lines alone and ends with CRLF', () => {
    expect(foldIcs('A:b\r\nC:d')).toBe('A:b\r\nC:d\r\n');
  });

  it('folds at exactly 75 octets, counting the leading space of continuations', () => {
    const line = `X:${'a'.repeat(200)}`;
    const folded = foldIcs(line).split('\r\n').slice(0, -1);
    expect(folded.map((l) => l.length)).toEqual([75, 75, 54]); // 202 = 75 + 74 + 53, plus one space on each continuation
    expect(folded.slice(1).every((l) => l.startsWith(' '))).toBe(true);
    expect(foldIcs(line).replace(/\r\n /g, '')).toBe(`${line}\r\n`);
  });

  it('a line of exactly 75 octets stays whole; 76 folds', () => {
    expect(foldIcs(`X:${'a'.repeat(73)}`).split('\r\n')).toHaveLength(2);
    expect(foldIcs(`X:${'a'.repeat(74)}`).split('\r\n')).toHaveLength(3);
  });

  it('never splits a multi-octet character: é (2 octets), € (3), 🦷 (4)', () => {
    for (const ch of ['é', '€', '🦷']) {
      const line = `X:${ch.repeat(100)}`;
      const physical = foldIcs(line).split('\r\n').slice(0, -1);
      for (const l of physical) {
        expect(Buffer.byteLength(l)).toBeLessThanOrEqual(75);
        expect([...l.replace(/^ /, '').replace(/^X:/, '')].every((c) => c === ch)).toBe(true);
      }
      expect(physical.join('\r\n').replace(/\r\n /g, '')).toBe(line);
    }
  });

  it('re-folds text folded by characters (as the ics package does) to octets', () => {
    const byChars = `X:${'é'.repeat(73)}\r\n\t${'é'.repeat(10)}\r\n`;
    const folded = foldIcs(byChars);
    expect(folded.split('\r\n').slice(0, -1).every((l) => Buffer.byteLength(l) <= 75)).toBe(true);
    expect(folded.replace(/\r\n /g, '')).toBe(`X:${'é'.repeat(83)}\r\n`);
  });
});
