import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema, MembershipSchema } from '@/entities';
import { Redis } from 'ioredis';
import { verifyCredentials, loadActor, takeSignInLinkRequest, SIGN_IN_UNAVAILABLE, WRONG_CREDENTIALS } from '@/lib/services/auth';
import { RateLimitedError, ServiceError } from '@/lib/services/errors';
import { PASSWORD, makePractice, openServices, resetData } from '../support/db';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const policy = {
  freePerAccountAddress: 3,
  freePerAddress: 5,
  baseDelaySeconds: 10,
  maxDelaySeconds: 60,
  windowSeconds: 600,
  linksPerAccount: 2,
  linksPerAddress: 4,
  linkWindowSeconds: 600,
};
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

  it('Redis down: fails closed with a clear 503, the right password included, since no try could be counted (issue 15, faults)', async () => {
    const em = await setup();
    // the web's client settings (lib/redis.ts: no offline queue, one retry) against a port nothing listens on
    const down = new Redis('redis://127.0.0.1:9', { enableOfflineQueue: false, maxRetriesPerRequest: 1, connectTimeout: 500, lazyConnect: true, retryStrategy: () => null });
    down.on('error', () => {});
    try {
      for (const password of [PASSWORD, 'nope']) {
        await expect(verifyCredentials(em, down, policy, { email: 'ana@north.test', password }, origin)).rejects.toMatchObject({ status: 503, code: 'unavailable', message: SIGN_IN_UNAVAILABLE });
      }
    } finally {
      down.disconnect();
    }
    expect(await actions()).toEqual([]); // no sign-in recorded, and no failure counted against the owner
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

  it('throttles wrong passwords per account-and-address with growing waits, never locking the owner out (issue 9 item 8)', async () => {
    const em = await setup();
    const wrong = () => verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin);
    for (let i = 0; i < policy.freePerAccountAddress; i++) await expect(wrong()).rejects.toThrow(new RegExp(`^${WRONG_CREDENTIALS}$`));
    // The next failure sets a wait and says so plainly.
    await expect(wrong()).rejects.toThrow(/Wrong e-mail or password\. Too many wrong passwords for this account from your network.*Wait 10 seconds.*e-mailed link.*not locked/);
    // Even the right password waits, from this address …
    const attempt = verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: PASSWORD }, origin);
    await expect(attempt).rejects.toBeInstanceOf(RateLimitedError);
    await expect(attempt).rejects.toThrow(/Wait 10 seconds before the next try — or sign in with an e-mailed link, which still works\. The account is not locked\./);
    // … but the owner elsewhere signs in at once: nothing is counted against the account alone.
    await expect(
      verifyCredentials(services.em(), services.redis, policy, { email: 'ana@north.test', password: PASSWORD }, { ...origin, ip: '198.51.100.2' }),
    ).resolves.toBeTruthy();
    // And asking for an e-mailed link from the throttled address still works.
    expect(await takeSignInLinkRequest(services.em(), services.redis, policy, 'ana@north.test', origin)).toEqual({ ok: true });
    expect((await actions()).map((a) => a[0])).toContain('auth.sign_in_limited');
  });

  it('each later failure doubles the wait, up to the maximum', async () => {
    const em = await setup();
    const waits: number[] = [];
    for (let i = 0; i < policy.freePerAccountAddress + 5; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin)).rejects.toThrow(WRONG_CREDENTIALS);
      const last = await services.em().findOneOrFail(AuditEventSchema, { action: 'auth.sign_in_failed' }, { orderBy: { at: 'desc', id: 'desc' } });
      waits.push(Number(last.detail?.waitSeconds ?? 0));
      // Let the wait pass (rather than sleep): only the wait is removed, the count stays.
      const keys = await services.redis.keys('lamina:signin:wait:*');
      if (keys.length) await services.redis.del(...keys);
    }
    expect(waits).toEqual([0, 0, 0, 10, 20, 40, 60, 60]);
  });

  it('throttles an address that tries many accounts, leaving other addresses alone', async () => {
    const em = await setup();
    for (let i = 0; i < policy.freePerAddress + 1; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: `x${i}@north.test`, password: 'nope' }, origin)).rejects.toThrow(ServiceError);
    }
    const attempt = verifyCredentials(em, services.redis, policy, { email: 'ben@north.test', password: PASSWORD }, origin);
    await expect(attempt).rejects.toBeInstanceOf(RateLimitedError);
    await expect(attempt).rejects.toThrow(/Too many wrong passwords from your network/);
    await expect(
      verifyCredentials(em, services.redis, policy, { email: 'ben@north.test', password: PASSWORD }, { ...origin, ip: '198.51.100.3' }),
    ).resolves.toBeTruthy();
  });

  it('clears the account-and-address count after a successful sign-in', async () => {
    const em = await setup();
    for (let i = 0; i < policy.freePerAccountAddress - 1; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin)).rejects.toThrow();
    }
    await verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: PASSWORD }, origin);
    for (let i = 0; i < policy.freePerAccountAddress; i++) {
      await expect(verifyCredentials(em, services.redis, policy, { email: 'ana@north.test', password: 'nope' }, origin)).rejects.toThrow(
        new RegExp(`^${WRONG_CREDENTIALS}$`),
      );
    }
  });

  it('limits e-mailed link requests per account and per address, with a plain message, and audits a refusal', async () => {
    const take = (email: string, ip = origin.ip) => takeSignInLinkRequest(services.em(), services.redis, policy, email, { ...origin, ip });
    await setup();
    for (let i = 0; i < policy.linksPerAccount; i++) expect(await take('ana@north.test')).toEqual({ ok: true });
    const refused = await take('ana@north.test', '198.51.100.4');
    expect(refused).toMatchObject({ ok: false, message: expect.stringMatching(/Too many sign-in links.*Use the link already sent/) });
    // Per address: another account from the same address still has a budget until the address's is spent.
    for (let i = 0; i < policy.linksPerAddress - policy.linksPerAccount; i++) expect(await take(`y${i}@north.test`)).toEqual({ ok: true });
    expect(await take('ben@north.test')).toMatchObject({ ok: false });
    expect(await take('ben@north.test', '198.51.100.5')).toEqual({ ok: true });
    expect((await actions()).filter((a) => a[0] === 'auth.link_limited')).toEqual([
      ['auth.link_limited', 'ana@north.test', null],
      ['auth.link_limited', 'ben@north.test', null],
    ]);
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
