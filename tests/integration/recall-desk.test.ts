import { randomBytes, randomUUID } from 'node:crypto';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { reminderJobId } from '@/lib/recall/reminders';
import { addDaysTo } from '@/lib/registry/calendar-date';
import { QUEUED_STATUSES, callList, deskQueues, listDeskRows, sendRemindersNow, bookVisits, markVisits } from '@/lib/services/recall-desk';
import { addCallNote, listContactLog } from '@/lib/services/recall-contact';
import { followUpRateReport } from '@/lib/services/recall-rate';
import { getReminderPolicy, updateReminderPolicy } from '@/lib/services/recall-policy';
import { insertOutboxRows, reminderProducer } from '@/lib/services/recall-outbox';
import { todayIn } from '@/lib/services/registry-common';
import { ForbiddenError, NotFoundError, ValidationError } from '@/lib/services/errors';
import { makeRegistryPractice, openServices, resetData } from '../support/db';
import { seedVisits, type VisitSpec } from './recall-fixtures';

/**
 * The desk services the recall-desk screen is built on: queues and their counts, rows, send now,
 * book, mark attended / missed, contact log and call notes, follow-up rate, reminder policy;
 * permissions and audit events.
 */
process.env.QUEUE_PREFIX = `lamina-test-desk-${randomBytes(3).toString('hex')}`;
const services = await openServices();
const knex = () => services.em().getKnex();
const today = todayIn('Europe/London');

beforeAll(async () => {
  await (await reminderProducer()).obliterate({ force: true });
});
afterAll(async () => {
  const queue = await reminderProducer();
  await queue.obliterate({ force: true });
  await queue.close();
  await services.close();
});
beforeEach(() => resetData(services.orm, services.redis));

async function world(specs: VisitSpec[]) {
  const p = await makeRegistryPractice(services.em(), `desk${randomBytes(3).toString('hex')}`);
  const v = await seedVisits(services.em(), p.practice.id, p.clinician.userId, today, specs, 'd');
  return { ...p, v, id: (i: number) => v[i]!.visitId };
}

async function sent(practiceId: string, visitId: string, step: 'invitation' | 'second_invitation', daysAgo: number) {
  const [row] = await insertOutboxRows(services.em(), [{ practiceId, visitId, step, origin: 'scan', day: addDaysTo(today, -daysAgo) }]);
  const at = new Date(Date.now() - daysAgo * 86_400_000);
  await knex()('reminder').where({ id: row!.id }).update({ status: 'sent', sent_at: at, sent_on: addDaysTo(today, -daysAgo), message_id: `<reminder-${row!.id}@lamina.invalid>` });
  await knex()('contact_log_entry').insert({ id: randomUUID(), practice_id: practiceId, visit_id: visitId, at, kind: 'message_sent', by: 'system', reminder_id: row!.id, step });
  return row!;
}

const DESK = [
  { dueIn: 10 }, // 0 due soon
  { dueIn: 20, status: 'invited' }, // 1 due soon, awaiting reply
  { dueIn: -5, status: 'invited' }, // 2 overdue, replied (asked for another time)
  { dueIn: -3, status: 'confirmed' }, // 3 due date passed but booked: not overdue
  { dueIn: -200, status: 'missed', windowAfter: 120 }, // 4 missed
  { dueIn: 11 }, // 5 due soon, delivery failed
  { dueIn: -30, status: 'attended' }, // 6 nothing
  { dueIn: 40 }, // 7 nothing yet
  { dueIn: 10, patientArchived: true }, // 8 archived: nowhere
] satisfies VisitSpec[];

async function desk() {
  const w = await world(DESK);
  await sent(w.practice.id, w.id(1), 'invitation', 3);
  await sent(w.practice.id, w.id(2), 'invitation', 12);
  await knex()('contact_log_entry').insert({ id: randomUUID(), practice_id: w.practice.id, visit_id: w.id(2), at: new Date(Date.now() - 86_400_000), kind: 'reply', by: 'patient', answer: 'another_time', note: 'Mornings, please.' });
  const failed = await sent(w.practice.id, w.id(5), 'invitation', 1);
  await knex()('reminder').where({ id: failed.id }).update({ status: 'failed', message_id: null, sent_at: null, sent_on: null, last_error: '550 mailbox unavailable' });
  await knex()('recall_visit').where({ id: w.id(5) }).update({ delivery_failed_at: new Date() });
  return w;
}

const counts = async (actor: Parameters<typeof deskQueues>[1]) =>
  Object.fromEntries((await deskQueues(services.em(), actor)).queues.map((q) => [q.key, q.count]));

describe('desk queues', () => {
  it('counts each queue exactly as defined', async () => {
    const w = await desk();
    const thisMonth = w.v.slice(0, 8).filter((x) => x.dueDate.slice(0, 7) === today.slice(0, 7)).length;
    expect(await counts(w.coordinator)).toEqual({ due_soon: 3, overdue: 1, call: 0, awaiting_reply: 1, replied: 1, delivery_failed: 1, missed: 1, this_month: thisMonth });
    const q = await deskQueues(services.em(), w.coordinator);
    expect(q.today).toBe(today);
    expect(q.queues.every((x) => x.label && x.definition)).toBe(true);
  });

  it('pages the rows of a queue with patient, tooth, milestone, due date, status, last contact and the next step', async () => {
    const w = await desk();
    const page = await listDeskRows(services.em(), w.coordinator, { queue: 'due_soon', sort: 'dueDate' });
    expect(page).toMatchObject({ total: 3, page: 1, queue: 'due_soon', toothLabel: expect.stringContaining('FDI') });
    expect(page.rows.map((r) => r.visitId)).toEqual([w.id(0), w.id(5), w.id(1)]);
    const [first, failed, invited] = page.rows;
    expect(first).toMatchObject({ tooth: '36', milestone: 12, dueDate: addDaysTo(today, 10), status: 'planned', statusLabel: 'Planned', lastContact: null, nextStep: 'invitation', reminders: [] });
    expect(first!.patient).toMatchObject({ name: 'Ashdown0, Wren0', canEmail: true });
    expect(failed).toMatchObject({ deliveryFailed: true, reminders: [{ step: 'invitation', status: 'failed' }] });
    expect(invited).toMatchObject({ status: 'invited', lastContact: { kind: 'message_sent', by: 'system' }, nextStep: 'second_invitation' });
    const replied = await listDeskRows(services.em(), w.coordinator, { queue: 'replied' });
    expect(replied.rows[0]).toMatchObject({ visitId: w.id(2), lastContact: { kind: 'reply', answer: 'another_time', note: 'Mornings, please.' } });
    await expect(listDeskRows(services.em(), w.coordinator, { queue: 'everything' })).rejects.toBeInstanceOf(ValidationError);
    const byName = await listDeskRows(services.em(), w.coordinator, { queue: 'due_soon', sort: 'patient', dir: 'desc' });
    expect(byName.rows.map((r) => r.patient.name)).toEqual(['Ashdown5, Wren5', 'Ashdown1, Wren1', 'Ashdown0, Wren0']);
    // By name the page and the count are read apart: the total, a second page and a page past the end
    const byName2 = await listDeskRows(services.em(), w.coordinator, { queue: 'due_soon', sort: 'patient', pageSize: 2, page: 2 });
    expect([byName.total, byName2.total, byName2.rows.map((r) => r.patient.name)]).toEqual([3, 3, ['Ashdown5, Wren5']]);
    expect(await listDeskRows(services.em(), w.coordinator, { queue: 'due_soon', sort: 'patient', pageSize: 2, page: 5 })).toMatchObject({ total: 3, rows: [] });
    const byContact = await listDeskRows(services.em(), w.coordinator, { queue: 'due_soon', sort: 'lastContact', dir: 'desc', pageSize: 2, page: 1 });
    expect(byContact).toMatchObject({ total: 3, pageSize: 2 });
    expect(byContact.rows.map((r) => r.visitId)).toEqual([w.id(5), w.id(1)]);
    expect(await knex()('audit_event').where({ action: 'recall.rows_read', actor_id: w.coordinator.userId }).count('* as n').first()).toMatchObject({ n: '6' });
  });

  it('"this month" counts every status, an archived case is in no queue, and a page past the end still gives the queue’s size (issue 15: the queued visits are read apart from this month’s)', async () => {
    const specs = (['planned', 'attended', 'cancelled', 'closed', 'missed', 'planned'] as const).map((status) => ({ dueIn: 0, status }));
    const w = await world(specs);
    await knex()('treatment_case').where({ id: w.v[5]!.caseId }).update({ archived_at: new Date() });
    const c = await counts(w.coordinator);
    expect(c).toMatchObject({ this_month: 5, due_soon: 1, missed: 1 });
    const first = await listDeskRows(services.em(), w.coordinator, { queue: 'this_month', pageSize: 2 });
    expect(first).toMatchObject({ total: 5, page: 1 });
    expect(first.rows).toHaveLength(2);
    const last = await listDeskRows(services.em(), w.coordinator, { queue: 'this_month', pageSize: 2, page: 3 });
    expect(last).toMatchObject({ total: 5, page: 3 });
    expect(last.rows).toHaveLength(1);
    const beyond = await listDeskRows(services.em(), w.coordinator, { queue: 'this_month', pageSize: 2, page: 9 });
    expect(beyond).toMatchObject({ total: 5, page: 9, rows: [] });
    expect(await listDeskRows(services.em(), w.coordinator, { queue: 'replied' })).toMatchObject({ total: 0, rows: [] });
  });

  it("each visit keeps its case's state (case and patient live, clinician, patient) whoever writes, and the desk follows it", async () => {
    const w = await desk();
    // Every visit's copy against its case and patient, by the definition (activeVisits' former joins).
    const stale = async () =>
      (
        (await knex().raw(
          `select count(*)::int as n from recall_visit v join treatment_case c on c.id = v.case_id join patient p on p.id = c.patient_id
            where v.practice_id = ? and (v.case_live is distinct from (c.archived_at is null and p.archived_at is null)
               or v.operator_id is distinct from c.operator_id or v.patient_id is distinct from c.patient_id)`,
          [w.practice.id],
        )) as { rows: { n: number }[] }
      ).rows[0]!.n;
    const live = async (i: number) => ((await knex()('recall_visit').where({ id: w.id(i) }).first('case_live')) as { case_live: boolean }).case_live;
    expect(await knex()('recall_visit').where({ practice_id: w.practice.id }).count('* as n').first()).toMatchObject({ n: '9' });
    expect(await stale()).toBe(0);
    expect([await live(0), await live(8)]).toEqual([true, false]); // visit 8's patient is archived
    const before = await counts(w.coordinator);

    // The patient archived, then back: the visit leaves the desk and returns.
    const patientOf = (i: number) => knex()('treatment_case').where({ id: w.v[i]!.caseId }).first('patient_id', 'operator_id') as Promise<{ patient_id: string; operator_id: string }>;
    const p0 = (await patientOf(0)).patient_id;
    await knex()('patient').where({ id: p0 }).update({ archived_at: new Date() });
    expect(await live(0)).toBe(false);
    expect(await counts(w.coordinator)).toMatchObject({ due_soon: before.due_soon! - 1 });
    await knex()('patient').where({ id: p0 }).update({ archived_at: null });
    expect(await live(0)).toBe(true);
    expect(await counts(w.coordinator)).toEqual(before);

    // The case handed to another clinician: the clinician's counts follow.
    const mine = async (actorId: string) => Object.fromEntries((await deskQueues(services.em(), w.coordinator, { clinician: actorId })).queues.map((q) => [q.key, q.count]));
    expect(await mine(w.clinician2.userId)).toMatchObject({ due_soon: 0, missed: 0 });
    await knex()('treatment_case').where({ id: w.v[0]!.caseId }).update({ operator_id: w.clinician2.userId });
    expect(await mine(w.clinician2.userId)).toMatchObject({ due_soon: 1, missed: 0 });
    expect(await mine(w.clinician.userId)).toMatchObject({ due_soon: before.due_soon! - 1 });

    // A visit moved to another case, and one inserted by plain SQL, take their case's state.
    await knex()('recall_visit').where({ id: w.id(7) }).update({ case_id: w.v[8]!.caseId, milestone: 99 });
    expect(await live(7)).toBe(false);
    const added = randomUUID();
    await knex()('recall_visit').insert({ id: added, practice_id: w.practice.id, case_id: w.v[0]!.caseId, milestone: 98, due_date: addDaysTo(today, 5), window_start: today, window_end: addDaysTo(today, 60), status: 'planned', status_changed_at: new Date(), created_at: new Date(), updated_at: new Date() });
    expect(await knex()('recall_visit').where({ id: added }).first('case_live', 'operator_id', 'patient_id')).toEqual({ case_live: true, operator_id: w.clinician2.userId, patient_id: p0 });
    expect(await stale()).toBe(0);
  });

  it('the desk indexes hold exactly the queued statuses (else the counts and the pages by name read the table again)', async () => {
    for (const index of ['recall_visit_desk_index', 'recall_visit_patient_queued_index']) {
      const { rows } = (await knex().raw(`select indexdef from pg_indexes where indexname = ?`, [index])) as { rows: { indexdef: string }[] };
      const listed = [...rows[0]!.indexdef.matchAll(/'(\w+)'::text/g)].map((m) => m[1]);
      expect(listed.sort(), index).toEqual([...QUEUED_STATUSES].sort());
      expect(rows[0]!.indexdef, index).toMatch(/case_live/);
    }
  });

  it('only the coordinator works the desk', async () => {
    const w = await desk();
    for (const actor of [w.admin, w.clinician, w.auditor, w.researcher]) {
      await expect(deskQueues(services.em(), actor)).rejects.toBeInstanceOf(ForbiddenError);
      await expect(sendRemindersNow(services.em(), actor, { visitIds: [w.id(0)] })).rejects.toBeInstanceOf(ForbiddenError);
      await expect(getReminderPolicy(services.em(), actor)).rejects.toBeInstanceOf(ForbiddenError);
    }
  });

  it('another practice’s visits are unknown here', async () => {
    const a = await desk();
    const b = await world([{ dueIn: 10 }]);
    await expect(sendRemindersNow(services.em(), a.coordinator, { visitIds: [b.id(0)] })).rejects.toBeInstanceOf(NotFoundError);
    await expect(listContactLog(services.em(), a.coordinator, b.id(0))).rejects.toBeInstanceOf(NotFoundError);
    expect(await knex()('reminder').where({ visit_id: b.id(0) }).count('* as n').first()).toMatchObject({ n: '0' });
  });
});

describe('queues of issue 10', () => {
  it('overdue means nobody has a time for it: confirmed, booked and proposed-ahead visits are not overdue', async () => {
    const w = await world([
      { dueIn: -5 }, // 0 overdue
      { dueIn: -5, status: 'invited' }, // 1 overdue
      { dueIn: -5, status: 'confirmed' }, // 2 booked: no
      { dueIn: -5, status: 'invited' }, // 3 a time proposed for next week: no
      { dueIn: -5, status: 'invited' }, // 4 a proposed time that has passed: overdue again
    ]);
    await knex()('recall_visit').where({ id: w.id(3) }).update({ proposed_start: new Date(Date.now() + 7 * 86_400_000) });
    await knex()('recall_visit').where({ id: w.id(4) }).update({ proposed_start: new Date(Date.now() - 86_400_000) });
    const page = await listDeskRows(services.em(), w.coordinator, { queue: 'overdue' });
    expect(page.rows.map((r) => r.visitId).sort()).toEqual([w.id(0), w.id(1), w.id(4)].sort());
    // Booked by phone: it leaves the queue.
    await bookVisits(services.em(), w.coordinator, { visitIds: [w.id(0)], start: `${addDaysTo(today, 3)}T10:00:00Z`, mode: 'phone' });
    expect((await counts(w.coordinator)).overdue).toBe(2);
  });

  it('patients who cannot be e-mailed are in the call queue with their phone number, and get no message', async () => {
    const w = await world([
      { dueIn: 10, channel: 'phone', email: null }, // 0 call
      { dueIn: -5, channel: 'email', email: null }, // 1 call: e-mail chosen but no address, overdue
      { dueIn: 40, channel: 'phone', email: null }, // 2 not yet due for an invitation (> 3 weeks)
      { dueIn: 10, recallContact: false, channel: 'none' }, // 3 no recall contact at all: not called
      { dueIn: 10, channel: 'post' }, // 4 call (post chosen: not e-mailed)
      { dueIn: 10, channel: 'phone', status: 'confirmed' }, // 5 has a time
      { dueIn: 10 }, // 6 e-mail: not in the call queue
    ]);
    await knex()('patient').whereIn('id', [w.v[0]!.patientId, w.v[1]!.patientId]).update({ phone: '020 7946 0999' });
    const page = await listDeskRows(services.em(), w.coordinator, { queue: 'call', sort: 'patient' });
    expect(page.rows.map((r) => r.visitId)).toEqual([w.id(0), w.id(1), w.id(4)]);
    expect(page.rows[1]!.patient).toMatchObject({ phone: '020 7946 0999', canEmail: false, recallContact: true, channel: 'email' });
    expect(page.rows[2]!.patient).toMatchObject({ canEmail: false, channel: 'post' });
    // "Invited" only when a message went out: send now refuses them and points to the call queue.
    const r = await sendRemindersNow(services.em(), w.coordinator, { visitIds: [w.id(0), w.id(6)] });
    expect(r.results.map((x) => [x.visit, x.outcome])).toEqual([
      ['Ashdown0, Wren0 — 12-month visit', 'refused'],
      ['Ashdown6, Wren6 — 12-month visit', 'queued'],
    ]);
    expect(r.results[0]!.message).toMatch(/To call/);
    expect(await knex()('recall_visit').where({ id: w.id(0) }).first('status')).toEqual({ status: 'planned' });
    expect(await knex()('reminder').where({ visit_id: w.id(0) }).count('* as n').first()).toMatchObject({ n: '0' });
    // The printable list holds the same visits, and its read is audited.
    const list = await callList(services.em(), w.coordinator, {});
    expect(list.rows.map((x) => x.visitId)).toEqual([w.id(1), w.id(0), w.id(4)]);
    expect(list.truncated).toBe(false);
    expect(await knex()('audit_event').where({ action: 'recall.call_list_read', actor_id: w.coordinator.userId }).count('* as n').first()).toMatchObject({ n: '1' });
    await expect(callList(services.em(), w.clinician, {})).rejects.toBeInstanceOf(ForbiddenError);
    // Booked by phone: off the list.
    await bookVisits(services.em(), w.coordinator, { visitIds: [w.id(0)], start: `${addDaysTo(today, 5)}T09:00:00Z`, mode: 'phone' });
    expect((await counts(w.coordinator)).call).toBe(2);
  });

  it('every queue can be narrowed to one clinician’s cases', async () => {
    const w = await world([{ dueIn: 10 }, { dueIn: 12 }, { dueIn: 14, channel: 'phone', email: null }]);
    await knex()('treatment_case').where({ id: w.v[1]!.caseId }).update({ operator_id: w.clinician2.userId });
    const mine = Object.fromEntries((await deskQueues(services.em(), w.coordinator, { clinician: w.clinician2.userId })).queues.map((q) => [q.key, q.count]));
    expect(mine).toMatchObject({ due_soon: 1, call: 0 });
    const rows = await listDeskRows(services.em(), w.coordinator, { queue: 'due_soon', clinician: w.clinician.userId });
    expect(rows.rows.map((r) => r.visitId)).toEqual([w.id(0), w.id(2)]);
    expect(rows.rows[0]!.clinician).toBeTruthy();
    expect((await callList(services.em(), w.coordinator, { clinician: w.clinician2.userId })).rows).toEqual([]);
    await expect(listDeskRows(services.em(), w.coordinator, { queue: 'due_soon', clinician: 'someone' })).rejects.toBeInstanceOf(ValidationError);
  });

  it('kept counts (issue 15, load): a change made elsewhere shows once they are older than their age; a desk action shows at once', async () => {
    const w = await desk();
    const KEEP = { maxAgeMs: 60_000 };
    const kept = async (filter: { clinician?: string } = {}) => Object.fromEntries((await deskQueues(services.em(), w.coordinator, filter, KEEP)).queues.map((q) => [q.key, q.count]));
    const fresh = async (filter: { clinician?: string } = {}) => Object.fromEntries((await deskQueues(services.em(), w.coordinator, filter, { maxAgeMs: 0 })).queues.map((q) => [q.key, q.count]));
    const before = await kept();
    expect(before).toMatchObject({ due_soon: 3, delivery_failed: 1 });
    // as the worker would: a delivery fails (no desk action through this process)
    await knex()('recall_visit').where({ id: w.id(0) }).update({ delivery_failed_at: new Date() });
    expect(await kept()).toEqual(before);
    expect(await fresh()).toEqual({ ...before, delivery_failed: 2 });
    // another clinician filter is counted on its own
    expect(await kept({ clinician: w.clinician2.userId })).toMatchObject({ due_soon: 0, delivery_failed: 0 });
    // a desk action forgets the practice's kept counts: the next count is current
    await markVisits(services.em(), w.coordinator, { visitIds: [w.id(3)], status: 'attended' });
    const after = await kept();
    expect(after).toEqual(await fresh());
    expect(after).toMatchObject({ delivery_failed: 2 });
    // so does a call note (it clears the delivery-failed flag)
    await addCallNote(services.em(), w.coordinator, w.id(0), { note: 'Rang: the address had a typo.', reached: true });
    expect(await kept()).toMatchObject({ delivery_failed: 1 });
  });

  it('bulk-action results name the patient and the visit on each line', async () => {
    const w = await desk();
    const r = await markVisits(services.em(), w.coordinator, { visitIds: [w.id(0), w.id(6)], status: 'missed', reason: 'no_show' });
    expect(r.results.map((x) => `${x.visit}: ${x.message}`)).toEqual([
      'Ashdown0, Wren0 — 12-month visit: Marked missed.',
      expect.stringMatching(/^Ashdown6, Wren6 — 12-month visit: A visit that is attended cannot become missed\. /),
    ]);
  });

  it('a time proposed by e-mail minutes after the invitation is its own message and starts the steps again', async () => {
    const w = await world([{ dueIn: 10, status: 'invited' }, { dueIn: 10, status: 'invited', channel: 'phone', email: null }]);
    const invitation = await sent(w.practice.id, w.id(0), 'invitation', 0);
    const start = `${addDaysTo(today, 6)}T09:30:00Z`;
    const r = await bookVisits(services.em(), w.coordinator, { visitIds: [w.id(0), w.id(1)], start, mode: 'propose', sendNow: true });
    expect(r.results.map((x) => [x.outcome, x.step ?? null])).toEqual([
      ['proposed', 'proposal'],
      ['refused', null],
    ]);
    expect(r.results[1]!.message).toMatch(/by phone/);
    const rows = (await knex()('reminder').where({ visit_id: w.id(0) }).orderBy('queued_at').select('step', 'round', 'status')) as object[];
    expect(rows).toEqual([
      { step: 'invitation', round: 0, status: 'sent' },
      { step: 'proposal', round: 1, status: 'queued' },
    ]);
    expect(await knex()('recall_visit').where({ id: w.id(0) }).first('reminder_round')).toEqual({ reminder_round: 1 });
    expect(await (await reminderProducer()).getJobState(reminderJobId(w.id(0), 'proposal', 1))).not.toBe('unknown');
    // Not "second invitation" minutes later: the proposal counts as this round's first message.
    const desk = await listDeskRows(services.em(), w.coordinator, { queue: 'due_soon' });
    expect(desk.rows.find((x) => x.visitId === w.id(0))).toMatchObject({ nextStep: 'second_invitation' });
    const again = await sendRemindersNow(services.em(), w.coordinator, { visitIds: [w.id(0)] });
    expect(again.results[0]).toMatchObject({ outcome: 'refused' }); // the proposal is on its way
    expect(invitation.id).toBeTruthy();
  });
});

describe('desk actions', () => {
  it('send now queues each visit’s next step the idempotent way; a double click sends nothing more', async () => {
    const w = await desk();
    const queue = await reminderProducer();
    const r = await sendRemindersNow(services.em(), w.coordinator, { visitIds: [w.id(0), w.id(7), w.id(4), w.id(8), w.id(1)] });
    expect(r.results.map((x) => [x.visitId, x.outcome, x.step ?? null])).toEqual([
      [w.id(0), 'queued', 'invitation'],
      [w.id(7), 'queued', 'invitation'],
      [w.id(4), 'refused', null],
      [w.id(8), 'refused', null],
      [w.id(1), 'queued', 'second_invitation'],
    ]);
    expect(r.results[2]!.message).toMatch(/missed/);
    expect(r.results[3]!.message).toMatch(/not agreed/);
    for (const [i, step] of [[0, 'invitation'], [7, 'invitation'], [1, 'second_invitation']] as const) {
      expect(await queue.getJobState(reminderJobId(w.id(i), step))).not.toBe('unknown');
      expect(await knex()('reminder').where({ visit_id: w.id(i), step }).first('status', 'origin', 'requested_by_id')).toEqual({ status: 'queued', origin: 'desk', requested_by_id: w.coordinator.userId });
    }
    const again = await sendRemindersNow(services.em(), w.coordinator, { visitIds: [w.id(0), w.id(7), w.id(1)] });
    expect(again.results.every((x) => x.outcome === 'refused')).toBe(true);
    expect(await knex()('reminder').whereIn('visit_id', [w.id(0), w.id(7), w.id(1)]).count('* as n').first()).toMatchObject({ n: '4' });
    await expect(sendRemindersNow(services.em(), w.coordinator, { visitIds: [w.id(3), randomUUID()] })).rejects.toBeInstanceOf(NotFoundError);
    await expect(sendRemindersNow(services.em(), w.coordinator, { visitIds: [] })).rejects.toBeInstanceOf(ValidationError);
    expect(await knex()('audit_event').where({ action: 'recall.send_now' }).count('* as n').first()).toMatchObject({ n: '2' });
  });

  it('send now retries a failed reminder (the same step, attempts cleared)', async () => {
    const w = await desk();
    const r = await sendRemindersNow(services.em(), w.coordinator, { visitIds: [w.id(5)] });
    expect(r.results).toMatchObject([{ visitId: w.id(5), ok: true, outcome: 'retrying', step: 'invitation' }]);
    expect(await knex()('reminder').where({ visit_id: w.id(5) }).first('status', 'attempts')).toEqual({ status: 'queued', attempts: 0 });
    expect(await (await reminderProducer()).getJobState(reminderJobId(w.id(5), 'invitation'))).toMatch(/waiting|delayed|prioritized/);
  });

  it('book: a proposed time waits for the next reminder; by phone the visit is confirmed', async () => {
    const w = await desk();
    const start = `${addDaysTo(today, 14)}T09:30:00Z`;
    const proposed = await bookVisits(services.em(), w.coordinator, { visitIds: [w.id(0), w.id(3)], start, mode: 'propose' });
    expect(proposed.results.map((x) => x.outcome)).toEqual(['proposed', 'refused']);
    expect((await knex()('recall_visit').where({ id: w.id(0) }).first('proposed_start', 'status')).status).toBe('planned');
    const phone = await bookVisits(services.em(), w.coordinator, { visitIds: [w.id(2), w.id(4), w.id(6)], start, mode: 'phone', note: 'Spoke to her daughter.' });
    expect(phone.results.map((x) => x.outcome)).toEqual(['booked', 'booked', 'refused']);
    expect(await knex()('recall_visit').where({ id: w.id(2) }).first('status', 'booked_date')).toEqual({ status: 'confirmed', booked_date: addDaysTo(today, 14) });
    expect(await counts(w.coordinator)).toMatchObject({ replied: 0, missed: 0 });
    await expect(bookVisits(services.em(), w.coordinator, { visitIds: [w.id(0)], start: 'soon', mode: 'phone' })).rejects.toBeInstanceOf(ValidationError);
    const log = await listContactLog(services.em(), w.coordinator, w.id(2));
    expect(log.entries.slice(-2).map((e) => [e.kind, e.by, e.summary])).toEqual([
      ['appointment', 'user', 'Appointment'],
      ['status_change', 'user', 'Status: invited → confirmed'],
    ]);
    expect(log.entries.at(-2)!.note).toMatch(/^Booked by phone for .*Spoke to her daughter\.$/);
  });

  it('book with sendNow: the proposal is queued at once as its own message (it carries the calendar file)', async () => {
    const w = await desk();
    const r = await bookVisits(services.em(), w.coordinator, { visitIds: [w.id(0)], start: `${addDaysTo(today, 9)}T08:00:00Z`, mode: 'propose', sendNow: true });
    expect(r.results[0]).toMatchObject({ ok: true, outcome: 'proposed', step: 'proposal', message: expect.stringMatching(/Proposal queued/) });
    expect(await knex()('reminder').where({ visit_id: w.id(0) }).first('step', 'round', 'status')).toEqual({ step: 'proposal', round: 1, status: 'queued' });
  });

  it('mark attended or missed only along the status table', async () => {
    const w = await desk();
    const r = await markVisits(services.em(), w.coordinator, { visitIds: [w.id(3), w.id(6), w.id(4)], status: 'attended' });
    expect(r.results.map((x) => x.outcome)).toEqual(['marked', 'marked', 'marked']);
    expect(r.results[1]!.message).toBe('Already attended.');
    const m = await markVisits(services.em(), w.coordinator, { visitIds: [w.id(6), w.id(0)], status: 'missed', reason: 'no_show' });
    expect(m.results.map((x) => [x.outcome, x.message])).toEqual([
      ['refused', 'A visit that is attended cannot become missed. Attended is final.'],
      ['marked', 'Marked missed.'],
    ]);
    const statuses = Object.fromEntries(((await knex()('recall_visit').select('id', 'status')) as { id: string; status: string }[]).map((x) => [x.id, x.status]));
    expect([statuses[w.id(3)], statuses[w.id(4)], statuses[w.id(6)], statuses[w.id(0)]]).toEqual(['attended', 'attended', 'attended', 'missed']);
    await expect(markVisits(services.em(), w.coordinator, { visitIds: [w.id(0)], status: 'closed' })).rejects.toBeInstanceOf(ValidationError);
  });

  it('a call note goes to the contact log and clears the delivery-failed flag', async () => {
    const w = await desk();
    await expect(addCallNote(services.em(), w.coordinator, w.id(5), { note: '' })).rejects.toBeInstanceOf(ValidationError);
    const log = await addCallNote(services.em(), w.coordinator, w.id(5), { note: 'No answer; left a message.', reached: false });
    expect(log.entries.at(-1)).toMatchObject({ kind: 'call', by: 'user', reached: false, note: 'No answer; left a message.', summary: 'Call — no answer', user: { id: w.coordinator.userId } });
    expect(log.entries[0]).toMatchObject({ kind: 'message_sent', reminder: { status: 'failed', lastError: '550 mailbox unavailable' } });
    expect(log.visit).toMatchObject({ visitId: w.id(5), deliveryFailed: false });
    expect(await counts(w.coordinator)).toMatchObject({ delivery_failed: 0 });
    expect(await knex()('audit_event').whereIn('action', ['recall.call_noted', 'recall.contact_log_read']).count('* as n').first()).toMatchObject({ n: '2' });
  });
});

describe('follow-up rate and policy', () => {
  it('attended ÷ due by milestone and month, with n and interval', async () => {
    const month = today.slice(0, 7);
    const w = await world([
      { dueIn: -40, status: 'attended' },
      { dueIn: -40, status: 'attended', milestone: 6 },
      { dueIn: -40, status: 'missed' },
      { dueIn: -40, status: 'cancelled' },
      { dueIn: -2, status: 'invited' }, // pending: due, window open
      { dueIn: 30 }, // not yet due
    ]);
    const r = await followUpRateReport(services.em(), w.coordinator, {});
    expect(r.to).toBe(month);
    expect(r.overall).toMatchObject({ due: 4, attended: 2, pending: 1 });
    expect(r.overall.rate).toBeCloseTo(0.5);
    expect(r.overall.interval!.lower).toBeLessThan(0.5);
    expect(r.byMilestone.map((g) => [g.key, g.due])).toEqual([
      [6, 1],
      [12, 3],
      [24, 0],
    ]);
    expect(r.byMonth).toHaveLength(12);
    const excl = await followUpRateReport(services.em(), w.coordinator, { pending: 'exclude' });
    expect(excl.overall).toMatchObject({ due: 3, attended: 2 });
    await expect(followUpRateReport(services.em(), w.coordinator, { from: '2026-13' })).rejects.toBeInstanceOf(ValidationError);
  });

  it('the coordinator reads and changes the reminder policy; every change is audited', async () => {
    const w = await world([]);
    expect(await getReminderPolicy(services.em(), w.coordinator)).toMatchObject({
      policy: { invitationWeeksBefore: 3, secondInvitationAfterDays: 10, lastNoticeDaysAfterDue: 14, lostAfterUnansweredAttempts: 3 },
      lastNoticeOutsideWindows: [],
    });
    await expect(updateReminderPolicy(services.em(), w.coordinator, { invitationWeeksBefore: 0 })).rejects.toBeInstanceOf(ValidationError);
    const changed = await updateReminderPolicy(services.em(), w.coordinator, { invitationWeeksBefore: 4, lastNoticeDaysAfterDue: 70, quietHours: { start: '20:00', end: '08:00' } });
    expect(changed.policy).toMatchObject({ invitationWeeksBefore: 4, lastNoticeDaysAfterDue: 70, quietHours: { start: '20:00', end: '08:00' } });
    expect(changed.lastNoticeOutsideWindows).toEqual([6]);
    const event = await knex()('audit_event').where({ action: 'recall.policy_updated' }).first('detail', 'actor_id');
    expect(event).toMatchObject({ actor_id: w.coordinator.userId, detail: { before: { invitationWeeksBefore: 3 }, after: { invitationWeeksBefore: 4 } } });
  });
});
