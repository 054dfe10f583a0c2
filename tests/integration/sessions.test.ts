import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema, MembershipSchema } from '@/entities';
import { choosePractice, endSessions, loadActor, resolveSession } from '@/lib/services/auth';
import { changePassword, signOutEverywhere } from '@/lib/services/account';
import { verifyPassword } from '@/lib/auth/password';
import { ValidationError } from '@/lib/services/errors';
import { PASSWORD, makePractice, openServices, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const origin = { ip: '198.51.100.4', userAgent: 'vitest' };

async function setup() {
  const a = await makePractice(services.em(), 'quince', [
    { email: 'admin@quince.test', roles: ['admin'] },
    { email: 'rue@quince.test', roles: ['clinician'] },
  ]);
  const b = await makePractice(services.em(), 'rowan', [{ email: 'admin@rowan.test', roles: ['admin'] }]);
  return { a, b, rue: a.actor('rue@quince.test') };
}

describe('sessions carry a version checked on every request (issue 9, item 7)', () => {
  it('a session without a version, or with an old one, loads no actor', async () => {
    const { rue } = await setup();
    expect(await loadActor(services.em(), rue.userId, origin, { sessionVersion: undefined })).toBeNull();
    expect((await loadActor(services.em(), rue.userId, origin, { sessionVersion: 0 }))?.userId).toBe(rue.userId);
    await endSessions(services.em(), rue.userId, 'sign_out', { origin });
    expect(await loadActor(services.em(), rue.userId, origin, { sessionVersion: 0 })).toBeNull();
    expect((await loadActor(services.em(), rue.userId, origin, { sessionVersion: 1 }))?.userId).toBe(rue.userId);
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'auth.sessions_ended' });
    expect(event).toMatchObject({ actorId: rue.userId, entityId: rue.userId, detail: { reason: 'sign_out' }, ip: origin.ip });
  });

  it('changing the password ends every session and needs the current password', async () => {
    const { rue } = await setup();
    await expect(changePassword(services.em(), rue, { current: 'wrong', password: 'a-brand-new-passphrase', confirm: 'a-brand-new-passphrase' })).rejects.toBeInstanceOf(
      ValidationError,
    );
    expect((await loadActor(services.em(), rue.userId, origin, { sessionVersion: 0 }))?.userId).toBe(rue.userId);
    await changePassword(services.em(), rue, { current: PASSWORD, password: 'a-brand-new-passphrase', confirm: 'a-brand-new-passphrase' });
    expect(await loadActor(services.em(), rue.userId, origin, { sessionVersion: 0 })).toBeNull();
    const em = services.em();
    const { UserSchema } = await import('@/entities');
    expect(await verifyPassword('a-brand-new-passphrase', (await em.findOneOrFail(UserSchema, { id: rue.userId })).passwordHash)).toBe(true);
    const actions = (await services.em().find(AuditEventSchema, { actorId: rue.userId }, { orderBy: { at: 'asc' } })).map((e) => [e.action, e.detail?.reason ?? null]);
    expect(actions).toEqual([
      ['auth.password_changed', null],
      ['auth.sessions_ended', 'password_changed'],
    ]);
  });

  it('"sign out everywhere" ends every session', async () => {
    const { rue } = await setup();
    await signOutEverywhere(services.em(), rue);
    expect(await loadActor(services.em(), rue.userId, origin, { sessionVersion: 0 })).toBeNull();
    expect(await services.em().count(AuditEventSchema, { action: 'auth.sessions_ended', detail: { reason: 'sign_out_everywhere' } })).toBe(1);
  });
});

describe('the practice of a session is chosen, never picked (issue 9, item 1)', () => {
  it('only a practice of one’s own is accepted, and the choice is audited in that practice', async () => {
    const { a, b, rue } = await setup();
    expect(await choosePractice(services.em(), rue.userId, b.practice.id, origin)).toBeNull();
    expect(await choosePractice(services.em(), rue.userId, 42, origin)).toBeNull();
    const em = services.em();
    em.create(MembershipSchema, { user: rue.userId, practice: b.practice.id, role: 'auditor' });
    await em.flush();
    expect((await resolveSession(services.em(), rue.userId, origin, { sessionVersion: 0 })).kind).toBe('choose_practice');
    expect(await choosePractice(services.em(), rue.userId, b.practice.id, origin)).toBe(b.practice.id);
    const s = await resolveSession(services.em(), rue.userId, origin, { sessionVersion: 0, practiceId: b.practice.id });
    expect(s.kind === 'actor' && [s.actor.practiceName, s.actor.roles]).toEqual([b.practice.name, ['auditor']]);
    const chosen = await services.em().find(AuditEventSchema, { action: 'auth.practice_chosen' });
    expect(chosen.map((e) => [e.practiceId, e.actorId, e.entityId])).toEqual([[b.practice.id, rue.userId, b.practice.id]]);
    expect(a.practice.id).not.toBe(b.practice.id);
  });
});
