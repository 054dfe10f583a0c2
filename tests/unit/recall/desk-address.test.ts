import { describe, expect, it } from 'vitest';
import { DESK_QUEUES, readDeskAddress } from '@/lib/recall/desk-address';

const A = '0b6f3a52-5d7e-4c1a-9f3e-2a1b7c9d4e10';
const B = '7c2d9e41-0a3b-4f6c-8d5e-1f2a3b4c5d6e';
const from = (query: string) => {
  const p = new URLSearchParams(query);
  return (name: string) => p.get(name);
};

describe('readDeskAddress: what the desk address asks for', () => {
  it('an empty address is the first queue, page 1, every clinician, nothing ignored', () => {
    expect(readDeskAddress(from(''))).toEqual({ queue: 'due_soon', page: 1, clinician: '', ignored: [] });
  });

  it.each(DESK_QUEUES.map((q) => [q]))('takes the queue %s as it is', (q) => {
    expect(readDeskAddress(from(`queue=${q}&page=3&clinician=${A}`))).toEqual({ queue: q, page: 3, clinician: A, ignored: [] });
  });

  it('an unknown queue, page and clinician each fall back and are each named', () => {
    const a = readDeskAddress(from('queue=nonsense&page=-2&clinician=not-an-id'));
    expect(a).toMatchObject({ queue: 'due_soon', page: 1, clinician: '' });
    expect(a.ignored).toEqual([
      'The queue “nonsense” in the address is not one of the desk’s queues: showing the first queue.',
      'The page “-2” in the address is not a page number: showing page 1.',
      'The clinician in the address is not one of the practice’s clinicians: showing every clinician.',
    ]);
  });

  it.each(['0', '1.5', 'abc', '01', '9999999'])('page %j is not a page number', (page) => {
    const a = readDeskAddress(from(`page=${page}`));
    expect(a.page).toBe(1);
    expect(a.ignored).toHaveLength(1);
  });

  it('a queue name is matched exactly (no case folding, no prototype keys)', () => {
    for (const q of ['DUE_SOON', 'toString', 'constructor']) {
      expect(readDeskAddress(from(`queue=${q}`)).queue).toBe('due_soon');
    }
  });

  it('a long value is shortened when repeated back', () => {
    const [line] = readDeskAddress(from(`queue=${'x'.repeat(500)}`)).ignored;
    expect(line).toContain(`“${'x'.repeat(40)}…”`);
    expect(line!.length).toBeLessThan(140);
  });

  it('once the clinicians are known, an id that is none of them is ignored; any case of a known one is kept', () => {
    expect(readDeskAddress(from(`clinician=${B}`), [A])).toMatchObject({ clinician: '', ignored: [expect.stringContaining('clinician')] });
    expect(readDeskAddress(from(`clinician=${A.toUpperCase()}`), [A])).toMatchObject({ clinician: A.toUpperCase(), ignored: [] });
    // Before the list arrives, a well-formed id is used as it is.
    expect(readDeskAddress(from(`clinician=${B}`))).toMatchObject({ clinician: B, ignored: [] });
  });

  it('empty values are the defaults, not mistakes', () => {
    expect(readDeskAddress(from('queue=&page=&clinician='))).toEqual({ queue: 'due_soon', page: 1, clinician: '', ignored: [] });
  });
});
