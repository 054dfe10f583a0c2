import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema, MembershipSchema } from '@/entities';
import { verifyCredentials, loadActor, WRONG_CREDENTIALS } from '@/lib/services/auth';
import { RateLimitedError, ServiceError } from '@/lib/services/errors';
import { PASSWORD, makePractice, openServices, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const policy = { maxPerAccount: 3, maxPerAddress: 5, windowSeconds: 60 };
const origin = { ip: '203.0.113.7', userAgent: 'vitest' };

async function setup() {
  const em = services.em();
  await makePractice(em, 'north', [
    { email: 'ana@north.test', roles: ['clinician'] },
    { email: 'ben@north.test', roles: ['coordinator'] },
  ]);
  return em;
}

const actions = async () =>
  (await services.em().find(AuditEventSchema, {}, { orderBy: { at: 'asc' } })).map((e) => [e.action, e.actorEmail, e.detail?.reason ?? e.detail?.method ?? null]);

describe('password sign-in against PostgreSQL and Redis', () => {
  it('accepts the right password, records the sign-in and its origin', async () => {
    const em = await setup();
    const { userId } = await verifyCredentials(em, services.redis, policy, { email: 'Ana@North.test ', password: PASSWORD }, origin);
    await em.flush();
    expect(userId).toBeTruthy();
    const events = await services.em().find(AuditEventSchema, { action: 'auth.sign_in' });
    expect(events).toHaveLength(1);
    expect(events[0]).toMatchObject({ actorId: userId, actorEmail: 'ana@north.test', ip: '203.0.113.7', entityId: userId });
    expect(events[0]!.practiceId).toBeTruthy();
  });

  it('refuses a wrong password and an unknown account with the same message, and audits both', async () => {
    const em = await setup();
    await expect(verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin)).rejects.toThrow(WRONG_CREDENTIALS);
    await expect(verifyCredentials(em, services.redis, policy, { email: 'who@north.test', password: 'nope' }, origin)).rejects.toThrow(WRONG_CREDENTIALS);
    expect(await actions()).toEqual([
      ['auth.sign_in_failed', 'ana@north.test', 'wrong_password'],
      ['auth.sign_in_failed', 'who@north.test', 'unknown_account'],
    ]);
  });

  it('limits attempts per account, with a clear message, even for the right password', async () => {
    const em = await setup();
    for (let i = 0; i < policy.maxPerAccount; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin)).rejects.toThrow(WRONG_CREDENTIALS);
    }
    const attempt = verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: PASSWORD }, origin);
    await expect(attempt).rejects.toBeInstanceOf(RateLimitedError);
    await expect(attempt).rejects.toThrow(/Too many sign-in attempts\. Wait 1 minute/);
    // Another account from another address is unaffected.
    await expect(
      verifyCredentials(em, services.redis, policy, { email: 'ben@north.test', password: PASSWORD }, { ...origin, ip: '198.51.100.2' }),
    ).resolves.toBeTruthy();
    expect((await actions()).map((a) => a[0])).toContain('auth.sign_in_limited');
  });

  it('limits attempts per address across accounts', async () => {
    const em = await setup();
    for (let i = 0; i < policy.maxPerAddress; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: `x${i}@north.test`, password: 'nope' }, origin)).rejects.toThrow(ServiceError);
    }
    await expect(verifyCredentials(em, services.redis, policy, { email: 'ben@north.test', password: PASSWORD }, origin)).rejects.toBeInstanceOf(
      RateLimitedError,
    );
    await expect(
      verifyCredentials(em, services.redis, policy, { email: 'ben@north.test', password: PASSWORD }, { ...origin, ip: '198.51.100.3' }),
    ).resolves.toBeTruthy();
  });

  it('clears the account count after a successful sign-in', async () => {
    const em = await setup();
    for (let i = 0; i < policy.maxPerAccount - 1; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin)).rejects.toThrow();
    }
    await verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: PASSWORD }, origin);
    for (let i = 0; i < policy.maxPerAccount - 1; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin)).rejects.toThrow(WRONG_CREDENTIALS);
    }
  });

  it('refuses a user whose every role was revoked, and loads no actor for them', async () => {
    const em = await setup();
    const { userId } = await verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: PASSWORD }, origin);
    expect((await loadActor(services.em(), userId, origin, { sessionVersion: 0 }))?.roles).toEqual(['clinician']);
    await services.em().nativeUpdate(MembershipSchema, { user: userId }, { revokedAt: new Date() });
    expect(await loadActor(services.em(), userId, origin, { sessionVersion: 0 })).toBeNull();
    await expect(verifyCredentials(services.em(), services.redis, policy, { email: 'ana@north.test', password: PASSWORD }, origin)).rejects.toThrow(
      WRONG_CREDENTIALS,
    );
    expect((await actions()).at(-1)).toEqual(['auth.sign_in_failed', 'ana@north.test', 'no_active_role']);
  });
});
