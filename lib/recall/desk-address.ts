/**
 * The recall desk's queues and what the desk's address (/desk?queue=&page=&clinician=) asks for.
 * Pure, and safe for the browser: the desk page reads its address with it before asking the server,
 * so that a hand-edited or stale address shows the desk with a word on what was ignored instead of
 * an error (the API itself still answers 422 for such values: lib/services/recall-desk.ts).
 */
import { isUuid } from '@/lib/uuid';

export const DESK_QUEUES = ['due_soon', 'overdue', 'call', 'awaiting_reply', 'replied', 'delivery_failed', 'missed', 'this_month'] as const;
export type DeskQueue = (typeof DESK_QUEUES)[number];

export function isDeskQueue(value: unknown): value is DeskQueue {
  return typeof value === 'string' && (DESK_QUEUES as readonly string[]).includes(value);
}

export interface DeskAddress {
  queue: DeskQueue;
  page: number;
  /** A clinician's id, or '' for every clinician. */
  clinician: string;
  /** One sentence per part of the address that was not understood and left out. */
  ignored: string[];
}

/** At most this many characters of a value are repeated back to the user. */
const ECHO = 40;
const echo = (v: string) => `“${v.length > ECHO ? `${v.slice(0, ECHO)}…` : v}”`;

/**
 * What the address asks for, each part checked on its own: an unknown queue falls back to the first
 * queue, a page that is not a whole number from 1 to page 1, and a clinician that is not an id (or,
 * once the practice's clinicians are known, not one of them) to every clinician.
 */
export function readDeskAddress(get: (name: string) => string | null, clinicianIds?: readonly string[]): DeskAddress {
  const ignored: string[] = [];
  const rawQueue = get('queue');
  let queue: DeskQueue = DESK_QUEUES[0];
  if (isDeskQueue(rawQueue)) queue = rawQueue;
  else if (rawQueue !== null && rawQueue !== '') ignored.push(`The queue ${echo(rawQueue)} in the address is not one of the desk’s queues: showing the first queue.`);

  const rawPage = get('page');
  let page = 1;
  if (rawPage !== null && rawPage !== '') {
    if (/^[1-9][0-9]{0,5}$/.test(rawPage)) page = Number(rawPage);
    else ignored.push(`The page ${echo(rawPage)} in the address is not a page number: showing page 1.`);
  }

  const rawClinician = (get('clinician') ?? '').trim();
  let clinician = '';
  if (rawClinician) {
    const known = isUuid(rawClinician) && (!clinicianIds || clinicianIds.some((id) => id.toLowerCase() === rawClinician.toLowerCase()));
    if (known) clinician = rawClinician;
    else ignored.push('The clinician in the address is not one of the practice’s clinicians: showing every clinician.');
  }
  return { queue, page, clinician, ignored };
}
