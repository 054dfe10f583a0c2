import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema } from '@/entities';
import { audit, auditPeople, auditRead, exportAuditCsv, listAuditEvents } from '@/lib/services/audit';
import { createCase, getCase } from '@/lib/services/cases';
import { ForbiddenError, ValidationError } from '@/lib/services/errors';
import { createPatient } from '@/lib/services/patients';
import { caseInput, makePractice, openServices, patientInput, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

async function world() {
  const em = services.em();
  const a = await makePractice(em, 'alder', [
    { email: 'admin@alder.test', roles: ['admin'] },
    { email: 'cal@alder.test', roles: ['clinician'] },
    { email: 'cora@alder.test', roles: ['coordinator'] },
    // One person holding both roles may read patient data, so the trail names patients to her.
    { email: 'both@alder.test', roles: ['admin', 'coordinator'] },
  ]);
  const b = await makePractice(em, 'birch', [
    { email: 'admin@birch.test', roles: ['admin'] },
    { email: 'cal@birch.test', roles: ['clinician'] },
  ]);
  const cal = a.actor('cal@alder.test');
  const patient = await createPatient(services.em(), cal, patientInput());
  const c = await createCase(services.em(), cal, caseInput(patient.id, cal.userId));
  await getCase(services.em(), a.actor('cora@alder.test'), c.id);
  const calB = b.actor('cal@birch.test');
  await createPatient(services.em(), calB, patientInput());
  return { a, b, patient, caseId: c.id, admin: a.actor('admin@alder.test') };
}

describe('the audit trail', () => {
  it('a read’s event (auditRead, a plain insert) is the same row as a change’s (audit, through the ORM), detail and all', async () => {
    const { a, caseId } = await world();
    const cora = { ...a.actor('cora@alder.test'), ip: '192.0.2.7', userAgent: 'x'.repeat(400) };
    const input = { entityType: 'case', entityId: caseId, detail: { ids: [caseId], page: 2, filters: ['kind'], nested: { quote: 'O’Brien "x"' } } };
    await auditRead(services.em(), cora, { action: 'test.read', ...input });
    await audit(services.em(), cora, { action: 'test.changed', ...input });
    const rows = await services.em().getKnex()('audit_event').whereIn('action', ['test.read', 'test.changed']).orderBy('action', 'desc').select('*');
    expect(rows).toHaveLength(2);
    const [read, changed] = rows.map(({ id, at, action: _action, ...rest }) => ({ rest, fresh: Math.abs(Date.now() - new Date(at).getTime()) < 60_000, id: typeof id }));
    expect(read).toEqual(changed);
    expect(read!.rest).toMatchObject({ practice_id: a.practice.id, actor_id: cora.userId, ip: '192.0.2.7', detail: input.detail });
    expect(read!.rest.user_agent).toHaveLength(300);
  });

  it('filters by person, in plain words, and names records for the administrator by kind and short reference only', async () => {
    const { a, admin, patient, caseId } = await world();
    const page = await listAuditEvents(services.em(), admin, { person: a.actor('cal@alder.test').userId });
    expect(page.rows.map((r) => r.action).sort()).toEqual(['case.created', 'patient.created']);
    const created = page.rows.find((r) => r.action === 'case.created')!;
    expect(created).toMatchObject({ who: 'cal', what: 'Registered a case', record: { kind: 'case', kindWords: 'Case', ref: caseId.slice(0, 8), name: null, href: null } });
    expect(created.detail).toContain(`patient: ${patient.id.slice(0, 8)}`);
    expect(JSON.stringify(page)).not.toContain('Ashdown');
  });

  it('names the patient to a reader who may also read patient data', async () => {
    const { a, caseId } = await world();
    const page = await listAuditEvents(services.em(), a.actor('both@alder.test'), { action: 'case.read' });
    expect(page.rows).toHaveLength(1);
    expect(page.rows[0]).toMatchObject({ who: 'cora', what: 'Opened a case', record: { name: 'Ashdown, Wren', href: `/cases/${caseId}` } });
    const read = await services.em().findOneOrFail(AuditEventSchema, { action: 'audit.read', actorId: a.actor('both@alder.test').userId });
    expect(read.detail).toMatchObject({ action: 'case.read', patientsNamed: true });
  });

  it('filters by action group, record kind and reference (including events whose detail names it), and pages', async () => {
    const { admin, patient, caseId } = await world();
    expect((await listAuditEvents(services.em(), admin, { action: 'case.' })).rows.map((r) => r.action).sort()).toEqual(['case.created', 'case.read']);
    expect((await listAuditEvents(services.em(), admin, { record: 'patient' })).rows.map((r) => r.action)).toEqual(['patient.created']);
    const byCase = await listAuditEvents(services.em(), admin, { ref: caseId.slice(0, 8).toUpperCase() });
    expect(byCase.rows.map((r) => r.action).sort()).toEqual(['case.created', 'case.read']);
    const byPatient = await listAuditEvents(services.em(), admin, { ref: patient.id.slice(0, 8) });
    expect(byPatient.rows.map((r) => r.action).sort()).toEqual(['case.created', 'case.read', 'patient.created']);
    const p1 = await listAuditEvents(services.em(), admin, { action: 'case.', pageSize: 1 });
    const p2 = await listAuditEvents(services.em(), admin, { action: 'case.', pageSize: 1, page: 2 });
    expect([p1.total, p1.rows.length, p2.rows.length]).toEqual([2, 1, 1]);
    expect(p1.rows[0]!.id).not.toBe(p2.rows[0]!.id);
  });

  it('filters by days in the practice’s time zone', async () => {
    const { a, admin } = await world();
    const em = services.em();
    // 23:30 UTC on 1 July 2026 is 00:30 on 2 July in London (BST, UTC+1).
    em.create(AuditEventSchema, { practiceId: a.practice.id, actorId: null, actorEmail: null, action: 'recall.reply', entityType: null, entityId: null, detail: null, ip: null, userAgent: null, at: new Date('2026-07-01T23:30:00Z') });
    await em.flush();
    expect((await listAuditEvents(services.em(), admin, { from: '2026-07-02', to: '2026-07-02' })).rows.map((r) => r.action)).toEqual(['recall.reply']);
    expect((await listAuditEvents(services.em(), admin, { from: '2026-07-01', to: '2026-07-01' })).total).toBe(0);
    expect((await listAuditEvents(services.em(), admin, { person: 'system' })).rows.map((r) => r.action)).toEqual(['recall.reply']);
  });

  it('refuses bad filters with a message per field, and the trail to anyone but the administrator', async () => {
    const { a, admin } = await world();
    const bad = await listAuditEvents(services.em(), admin, { ref: 'xyz', from: '2026-02-30', person: 'someone' }).catch((e) => e);
    expect(bad).toBeInstanceOf(ValidationError);
    expect(Object.keys(bad.fieldErrors).sort()).toEqual(['from', 'person', 'ref']);
    const order = await listAuditEvents(services.em(), admin, { from: '2026-03-02', to: '2026-03-01' }).catch((e) => e);
    expect(order.fieldErrors).toEqual({ to: ['The first day comes after the last.'] });
    await expect(listAuditEvents(services.em(), a.actor('cora@alder.test'), {})).rejects.toBeInstanceOf(ForbiddenError);
    await expect(exportAuditCsv(services.em(), a.actor('cal@alder.test'), {})).rejects.toBeInstanceOf(ForbiddenError);
  });

  it('offers the practice’s own people as the person filter', async () => {
    const { admin } = await world();
    const people = await auditPeople(services.em(), admin);
    expect(people.map((p) => p.label)).toEqual(['admin (admin@alder.test)', 'both (both@alder.test)', 'cal (cal@alder.test)', 'cora (cora@alder.test)', 'Lamina itself and patients’ links']);
  });

  it('exports the filtered trail as CSV with formulas neutralised, only the practice’s own, and audits the export', async () => {
    const { a, admin, caseId } = await world();
    const em = services.em();
    // A failed sign-in keeps the e-mail as typed: an attacker can type a formula.
    em.create(AuditEventSchema, { practiceId: a.practice.id, actorId: null, actorEmail: '=HYPERLINK("http://evil.invalid")', action: 'auth.sign_in_failed', entityType: null, entityId: null, detail: { reason: '@SUM(1)' }, ip: '127.0.0.1', userAgent: null });
    await em.flush();
    const all = await exportAuditCsv(services.em(), admin, {});
    const lines = all.csv.trim().split('\r\n');
    expect(lines[0]).toBe('When (UTC),Who,E-mail,What,Action code,Record,Record id,Patient,Detail,From');
    expect(all.csv).toContain(`"'=HYPERLINK(""http://evil.invalid"")"`);
    expect(all.csv).toContain(',reason: @SUM(1),'); // not at the start of the cell: no formula
    expect(all.csv).not.toContain('birch');
    expect(all.csv).not.toContain('Ashdown');
    const cases = await exportAuditCsv(services.em(), admin, { record: 'case' });
    expect(cases.rows).toBe(2);
    expect(cases.csv).toContain(`,Case,${caseId},`);
    const exported = await services.em().findOneOrFail(AuditEventSchema, { action: 'audit.exported', detail: { record: 'case' } });
    expect(exported.detail).toMatchObject({ rows: 2 });
  });
});
